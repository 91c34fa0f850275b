import seedrandom from "seedrandom";

/** A seeded random stream. Every random choice in nightshift comes from one of these. */
export interface Rng {
  /** Uniform in [0, 1). */
  next(): number;
  /** Uniform integer in [0, n). */
  int(n: number): number;
  /** Standard normal (Box–Muller). */
  normal(): number;
}

/**
 * A stream derived from named parts, e.g. `createRng(seed, "trial", 17, "fold", 3)`.
 * The same parts give the same stream on every machine and in every process
 * (seedrandom's Alea generator, seeded with the joined parts).
 */
export function createRng(...parts: ReadonlyArray<string | number>): Rng {
  const prng = seedrandom.alea(parts.map(String).join("/"));
  let spare = NaN;
  return {
    next: () => prng(),
    int: (n: number) => Math.floor(prng() * n),
    normal: () => {
      if (!Number.isNaN(spare)) {
        const value = spare;
        spare = NaN;
        return value;
      }
      let u = 0;
      while (u === 0) u = prng();
      const v = prng();
      const radius = Math.sqrt(-2 * Math.log(u));
      spare = radius * Math.sin(2 * Math.PI * v);
      return radius * Math.cos(2 * Math.PI * v);
    },
  };
}

/** Fisher–Yates shuffle of `values` in place with the given stream. */
export function shuffleInPlace<T extends { length: number; [i: number]: number }>(values: T, rng: Rng): T {
  for (let i = values.length - 1; i > 0; i--) {
    const j = rng.int(i + 1);
    const tmp = values[i];
    values[i] = values[j];
    values[j] = tmp;
  }
  return values;
}
