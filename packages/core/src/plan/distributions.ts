import type { Rng } from "../random.js";

/** A hyperparameter value that is fixed rather than searched. */
export type Constant = number | string | boolean | null;

/** How one hyperparameter is searched (random search, Bergstra & Bengio 2012). */
export type Distribution =
  | { readonly kind: "constant"; readonly value: Constant }
  | { readonly kind: "choice"; readonly options: readonly Constant[] }
  | { readonly kind: "uniform"; readonly low: number; readonly high: number }
  | { readonly kind: "log_uniform"; readonly low: number; readonly high: number }
  | { readonly kind: "int"; readonly low: number; readonly high: number; readonly log: boolean };

/**
 * Parses the plan's spelling of a distribution: a constant, `{ choice: [...] }`,
 * `{ uniform: [lo, hi] }`, `{ log_uniform: [lo, hi] }` or `{ int: [lo, hi], log?: bool }`.
 * Returns the distribution, or a message saying what is wrong.
 */
export function parseDistribution(raw: unknown): Distribution | string {
  if (raw === null || typeof raw === "number" || typeof raw === "string" || typeof raw === "boolean") {
    if (typeof raw === "number" && !Number.isFinite(raw)) return "must be a finite number";
    return { kind: "constant", value: raw };
  }
  if (typeof raw !== "object" || Array.isArray(raw)) return "must be a value or one of { choice }, { uniform }, { log_uniform }, { int }";
  const entry = raw as Record<string, unknown>;
  const keys = Object.keys(entry);
  const kind = keys.find((k) => k === "choice" || k === "uniform" || k === "log_uniform" || k === "int");
  if (kind === undefined) return `unknown distribution key '${keys[0] ?? ""}'; use choice, uniform, log_uniform or int`;
  const extra = keys.filter((k) => k !== kind && !(kind === "int" && k === "log"));
  if (extra.length > 0) return `unknown key '${extra[0]}' beside '${kind}'`;
  const value = entry[kind];
  if (kind === "choice") {
    if (!Array.isArray(value) || value.length === 0) return "choice must be a non-empty list";
    for (const option of value)
      if (!(option === null || ["number", "string", "boolean"].includes(typeof option))) return "choice options must be numbers, strings, booleans or null";
    return { kind: "choice", options: value as Constant[] };
  }
  if (!Array.isArray(value) || value.length !== 2 || !value.every((v) => typeof v === "number" && Number.isFinite(v)))
    return `${kind} must be a list of two numbers [low, high]`;
  const [low, high] = value as [number, number];
  if (!(low <= high)) return `${kind} needs low <= high (got [${low}, ${high}])`;
  // A span that overflows a double would sample only infinities.
  if (!Number.isFinite(high - low)) return `${kind} range [${low}, ${high}] is wider than a double can hold`;
  if (kind === "uniform") return { kind, low, high };
  if (kind === "log_uniform") {
    if (!(low > 0)) return `log_uniform needs low > 0 (got ${low})`;
    return { kind, low, high };
  }
  if (!Number.isInteger(low) || !Number.isInteger(high)) return `int needs integer bounds (got [${low}, ${high}])`;
  // Beyond 2^53 a double no longer holds every integer, so the draw would skip values.
  if (!Number.isSafeInteger(low) || !Number.isSafeInteger(high)) return `int bounds must lie within ±${Number.MAX_SAFE_INTEGER} (got [${low}, ${high}])`;
  const log = entry.log ?? false;
  if (typeof log !== "boolean") return "log must be true or false";
  if (log && !(low >= 1)) return `int with log needs low >= 1 (got ${low})`;
  return { kind: "int", low, high, log };
}

/** One draw from a distribution. */
export function sample(distribution: Distribution, rng: Rng): Constant {
  switch (distribution.kind) {
    case "constant":
      return distribution.value;
    case "choice":
      return distribution.options[rng.int(distribution.options.length)];
    case "uniform":
      return distribution.low + rng.next() * (distribution.high - distribution.low);
    case "log_uniform":
      return Math.exp(Math.log(distribution.low) + rng.next() * (Math.log(distribution.high) - Math.log(distribution.low)));
    case "int": {
      const { low, high } = distribution;
      if (!distribution.log) return low + rng.int(high - low + 1);
      // Log-uniform over [low, high + 1) then floored, so every integer is reachable.
      const x = Math.exp(Math.log(low) + rng.next() * (Math.log(high + 1) - Math.log(low)));
      return Math.min(high, Math.floor(x));
    }
  }
}

/** The values worth checking against a family's parameter schema: every option or both ends. */
export function extremes(distribution: Distribution): Constant[] {
  switch (distribution.kind) {
    case "constant":
      return [distribution.value];
    case "choice":
      return [...distribution.options];
    default:
      return [distribution.low, distribution.high];
  }
}
