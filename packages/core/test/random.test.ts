import { describe, expect, it } from "vitest";
import { createRng, shuffleInPlace } from "../src/random.js";

describe("seeded random streams", () => {
  it("gives the same stream for the same parts and different streams for different parts", () => {
    const a = createRng(42, "trial", 3);
    const b = createRng(42, "trial", 3);
    const c = createRng(42, "trial", 4);
    const drawsA = Array.from({ length: 5 }, () => a.next());
    expect(Array.from({ length: 5 }, () => b.next())).toEqual(drawsA);
    expect(Array.from({ length: 5 }, () => c.next())).not.toEqual(drawsA);
  });

  it("shuffles a permutation of the input", () => {
    const values = Uint32Array.from({ length: 100 }, (_, i) => i);
    shuffleInPlace(values, createRng(1));
    expect(Array.from(values).sort((x, y) => x - y)).toEqual(Array.from({ length: 100 }, (_, i) => i));
    expect(Array.from(values)).not.toEqual(Array.from({ length: 100 }, (_, i) => i));
  });

  it("draws normals with mean 0 and variance 1", () => {
    const rng = createRng("normal");
    let sum = 0;
    let sumSq = 0;
    const n = 20_000;
    for (let i = 0; i < n; i++) {
      const z = rng.normal();
      sum += z;
      sumSq += z * z;
    }
    expect(Math.abs(sum / n)).toBeLessThan(0.03);
    expect(Math.abs(sumSq / n - 1)).toBeLessThan(0.05);
  });
});
