import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { metricByName, type Metric, type Task } from "@nightshift/core";
import { buildEnsembles } from "../src/ensembles/build-ensembles.js";
import { scoreStored } from "../src/ensembles/nested-estimate.js";
import { assembleOutOfFold, predictionRows, rankTrials, targetRows } from "../src/ensembles/out-of-fold-set.js";
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
  folds: number[];
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

/** The reference matrices as a run's out-of-fold set, folds as the script drew them. */
function setOf(c: Case, task: Task, width: number, metric: Metric) {
  const target = task === "regression" ? Float64Array.from(c.target) : Int32Array.from(c.target);
  const foldCount = Math.max(...c.folds) + 1;
  const foldTests = Array.from({ length: foldCount }, (_, f) => Uint32Array.from(c.folds.flatMap((g, i) => (g === f ? [i] : []))));
  const trials = c.members.map((m, trial) => {
    const p = Float32Array.from(m);
    const foldScores = Float64Array.from(foldTests, (rows) => scoreStored(metric, { task, width }, targetRows(target, rows), predictionRows(Float64Array.from(p), width, rows)));
    return { trial, folds: foldTests.map((rows) => predictionRows(p, width, rows)), foldScores, rankScore: foldScores.reduce((a, b) => a + b, 0) / foldCount };
  });
  return assembleOutOfFold({ task, classCount: task === "regression" ? 1 : width === 1 ? 2 : width, width, target, foldTests, trials: rankTrials(trials, metric.direction) });
}

describe(`ensembles on the same out-of-fold matrices (${source})`, () => {
  it.each([
    ["breast cancer", "binary", 1, "average_precision"],
    ["Palmer penguins", "multiclass", 3, "log_loss"],
    ["Friedman #1", "regression", 1, "rmse"],
  ] as const)("%s: the kept selection scores the best point of its curve, and every ensemble reports a nested estimate", (name, task, width, metricName) => {
    const c = name === "breast cancer" ? reference.breast_cancer : name === "Palmer penguins" ? reference.penguins : reference.friedman1;
    const metric = metricByName(metricName);
    const build = buildEnsembles(setOf(c, task, width, metric), metric, { selection: { rounds: 25, candidates: 4, init: 0 }, stacking: { top: 4, non_negative: false }, voting: { top: 4 } }, 1 / 4);
    const selection = build.ensembles.find((e) => e.spec.kind === "selection");
    if (!selection) throw new Error("no selection");
    const curve = selection.summary.curve.map((v) => v ?? Number.NaN);
    const better = (a: number, b: number): boolean => (metric.direction === "max" ? a > b : a < b);
    let best = curve[0];
    for (const v of curve) if (better(v, best)) best = v;
    // The hillclimb (out-of-fold) score of the kept ensemble is the curve's best point, on the rows it selected on.
    const pooled = scoreStored(metric, { task, width }, setOf(c, task, width, metric).target, selection.outOfFold);
    expect(Math.abs(pooled - best)).toBeLessThan(1e-12);
    for (const e of build.ensembles) {
      expect(Number.isFinite(e.summary.nested.mean)).toBe(true);
      expect(e.summary.nested.folds).toHaveLength(5);
    }
  });
});
