import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { fitStacker } from "../src/ensembles/stacking.js";

interface Fit {
  weights: number[];
  intercepts?: number[];
  intercepts_centred?: number[];
  objective: number;
}
interface Case {
  target: number[];
  members: number[][];
  labels?: string[];
  free: Fit;
  non_negative: Fit;
}
interface Reference {
  versions: Record<string, string>;
  breast_cancer: Case;
  penguins: Case;
  friedman1: Case;
}

const reference = JSON.parse(readFileSync(new URL("../../../test/reference/stacking_reference.json", import.meta.url), "utf8")) as Reference;
const source = `test/reference/stacking_reference.py with scikit-learn ${reference.versions.sklearn}, scipy ${reference.versions.scipy}`;
/** Both sides minimise the same strictly convex objective to a tight tolerance; the optimum agrees to this. */
const TOLERANCE = 1e-4;

function expectClose(actual: ArrayLike<number>, expected: number[], what: string, tolerance = TOLERANCE): void {
  expect(actual.length, what).toBe(expected.length);
  for (let i = 0; i < expected.length; i++)
    if (!(Math.abs(actual[i] - expected[i]) <= tolerance)) throw new Error(`${what}[${i}]: got ${actual[i]}, expected ${expected[i]} (${source})`);
}

/**
 * The penguins' softmax is nearly separable for one class, so its intercepts lie along a
 * direction where the objective changes by less than 1e-12: both optimisers stop at slightly
 * different points of it (the objective values agree to 1e-12, checked by hand with the
 * script's objective). The weights are well determined.
 */
const FLAT_INTERCEPT_TOLERANCE = 1e-2;

function centred(values: Float64Array): number[] {
  const mean = values.reduce((a, b) => a + b, 0) / values.length;
  return Array.from(values, (v) => v - mean);
}

describe(`stacker coefficients against ${source}`, () => {
  it("binary (breast cancer): equal to LogisticRegression(C=1) on the members' logits, and to the bounded fit with w ≥ 0", () => {
    const c = reference.breast_cancer;
    const members = c.members.map((m) => Float32Array.from(m));
    const target = Int32Array.from(c.target);
    const free = fitStacker(members, target, "binary", 1, { nonNegative: false });
    expect(free.converged).toBe(true);
    expectClose(free.weights, c.free.weights, "weights");
    expectClose(free.intercepts, c.free.intercepts ?? [], "intercept");
    const bounded = fitStacker(members, target, "binary", 1, { nonNegative: true });
    expectClose(bounded.weights, c.non_negative.weights, "non-negative weights");
    expectClose(bounded.intercepts, c.non_negative.intercepts ?? [], "non-negative intercept");
    expect(Math.min(...bounded.weights)).toBeGreaterThanOrEqual(0);
  });

  it("multiclass (Palmer penguins): equal to scipy's fit of the shared-weight softmax on log-probabilities", () => {
    const c = reference.penguins;
    const classes = c.labels?.length ?? 0;
    const members = c.members.map((m) => Float32Array.from(m));
    const target = Int32Array.from(c.target);
    const free = fitStacker(members, target, "multiclass", classes, { nonNegative: false });
    expectClose(free.weights, c.free.weights, "weights");
    expectClose(centred(free.intercepts), c.free.intercepts_centred ?? [], "centred intercepts", FLAT_INTERCEPT_TOLERANCE);
    const bounded = fitStacker(members, target, "multiclass", classes, { nonNegative: true });
    expectClose(bounded.weights, c.non_negative.weights, "non-negative weights");
    expectClose(centred(bounded.intercepts), c.non_negative.intercepts_centred ?? [], "non-negative centred intercepts", FLAT_INTERCEPT_TOLERANCE);
    expect(bounded.weights.slice(0, 3)).toEqual(new Float64Array(3));
  });

  it("regression (Friedman #1): equal to Ridge(alpha=1) on the members' values, and NNLS to the bounded fit", () => {
    const c = reference.friedman1;
    const members = c.members.map((m) => Float32Array.from(m));
    const target = Float64Array.from(c.target);
    const free = fitStacker(members, target, "regression", 1, { nonNegative: false });
    expectClose(free.weights, c.free.weights, "weights");
    expectClose(free.intercepts, c.free.intercepts ?? [], "intercept");
    const bounded = fitStacker(members, target, "regression", 1, { nonNegative: true });
    expectClose(bounded.weights, c.non_negative.weights, "non-negative weights");
    expectClose(bounded.intercepts, c.non_negative.intercepts ?? [], "non-negative intercept");
  });
});
