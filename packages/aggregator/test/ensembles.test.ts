import { createRng, type FeatureColumn, metricByName } from "@nightshift/core";
import { describe, expect, it } from "vitest";
import { buildEnsembles, type EnsembleSettings } from "../src/ensembles/build-ensembles.js";
import { combinePredictions, sigmoid, toFullWidth } from "../src/ensembles/combine-predictions.js";
import { ExportedEnsembleSchema } from "../src/ensembles/exported-ensemble.js";
import { scoreStored } from "../src/ensembles/nested-estimate.js";
import { nonNegativeLeastSquares } from "../src/ensembles/non-negative-least-squares.js";
import { assembleOutOfFold, predictionRows, rowsOfFold, targetRows } from "../src/ensembles/out-of-fold-set.js";
import { permutationImportance } from "../src/ensembles/permutation-importance.js";
import { minimizeOnBox } from "../src/ensembles/spectral-projected-gradient.js";
import { fitStacker } from "../src/ensembles/stacking.js";

const averagePrecision = metricByName("average_precision");

/** An out-of-fold set from whole-row predictions, with five interleaved folds and per-fold scores. */
function setOf(y: Int32Array, predictions: Float32Array[], folds = 5) {
  const n = y.length;
  const foldTests = Array.from({ length: folds }, (_, f) => Uint32Array.from({ length: Math.ceil((n - f) / folds) }, (_, j) => f + j * folds));
  const partial = { task: "binary" as const, width: 1 };
  const trials = predictions.map((p, trial) => {
    const foldScores = Float64Array.from(foldTests, (rows) => scoreStored(averagePrecision, partial, targetRows(y, rows), predictionRows(Float64Array.from(p), 1, rows)));
    return { trial, folds: foldTests.map((rows) => predictionRows(p, 1, rows)), foldScores, rankScore: foldScores.reduce((a, b) => a + b, 0) / folds };
  });
  trials.sort((a, b) => b.rankScore - a.rankScore || a.trial - b.trial);
  return assembleOutOfFold({ task: "binary", classCount: 2, width: 1, target: y, foldTests, trials });
}

const settings: EnsembleSettings = {
  selection: { rounds: 30, candidates: 40, init: 0 },
  stacking: { top: 40, non_negative: false },
  voting: { top: 10 },
};

describe("honest (nested) estimates", () => {
  it("are not more optimistic than the out-of-fold score when selection can only overfit (noise candidates)", () => {
    const rng = createRng("ensembles-test", "noise");
    const n = 400;
    const y = Int32Array.from({ length: n }, () => (rng.next() < 0.3 ? 1 : 0));
    const noise = Array.from({ length: 40 }, () => Float32Array.from({ length: n }, () => rng.next()));
    const set = setOf(y, noise);
    const build = buildEnsembles(set, averagePrecision, settings, 1 / 4);
    for (const kind of ["selection", "stacking"]) {
      const e = build.ensembles.find((x) => x.spec.kind === kind);
      if (!e || e.summary.mean === null || e.summary.nested.mean === null) throw new Error(`${kind} has no scores`);
      expect(e.summary.nested.mean).toBeLessThan(e.summary.mean);
      expect(e.summary.nested.folds).toHaveLength(5);
    }
    // With no signal anywhere, the honest estimate stays near the positive rate (AP of a random ranking).
    const selection = build.ensembles.find((x) => x.spec.kind === "selection");
    expect(Math.abs((selection?.summary.nested.mean ?? 0) - 0.3)).toBeLessThan(0.08);
  });

  it("ranks, fits and compares with the best single trial; a single trial is exported unless an ensemble beats it honestly", () => {
    const rng = createRng("ensembles-test", "signal");
    const n = 1500;
    const y = Int32Array.from({ length: n }, () => (rng.next() < 0.2 ? 1 : 0));
    const signal = Float64Array.from(y, (label) => label * 1.5);
    const models = Array.from({ length: 8 }, () => Float32Array.from(signal, (s) => sigmoid(s + 1.2 * rng.normal() - 1.5)));
    const set = setOf(y, models);
    const build = buildEnsembles(set, averagePrecision, { ...settings, voting: { top: 8 } }, 1 / 4);
    expect(build.ensembles.map((e) => e.spec.kind)).toEqual(["voting", "selection", "stacking"]);
    // Independent errors: averaging helps in honest terms too, so an ensemble is exported.
    const voting = build.ensembles[0];
    expect(voting.summary.nested.mean ?? 0).toBeGreaterThan(build.single.summary.nested.mean ?? 1);
    expect(build.final).not.toBe("single");
    expect(build.ensembles.filter((e) => e.summary.final)).toHaveLength(1);
    expect(build.notes.join(" ")).toMatch(/fewer than the 40 asked; using 8/);
    for (const e of build.ensembles) expect(typeof e.summary.nested.tie_with_best).toBe("boolean");
  });
});

describe("soft voting", () => {
  it("is exactly the mean of the members' probabilities", () => {
    const rng = createRng("ensembles-test", "voting");
    const members = Array.from({ length: 4 }, () => Float32Array.from({ length: 50 * 3 }, () => rng.next()));
    const voted = combinePredictions({ kind: "voting", members: members.map((_, m) => ({ trial: m, weight: 1 / 4 })) }, "multiclass", 3, members, 50);
    for (let i = 0; i < voted.length; i++) {
      const mean = (members[0][i] + members[1][i] + members[2][i] + members[3][i]) / 4;
      expect(Math.abs(voted[i] - mean)).toBeLessThan(1e-15);
    }
  });
});

describe("stacking (Wolpert 1992; Breiman 1996)", () => {
  it("puts nearly all weight on the one good member among noise members (METHODS.md §12)", () => {
    const rng = createRng("ensembles-test", "stack-good");
    const n = 4000;
    const logits = Float64Array.from({ length: n }, () => 2 * rng.normal());
    const y = Int32Array.from(logits, (z) => (rng.next() < sigmoid(z) ? 1 : 0));
    const good = Float32Array.from(logits, sigmoid);
    const noise = Array.from({ length: 5 }, () => Float32Array.from({ length: n }, () => 0.05 + 0.9 * rng.next()));
    for (const nonNegative of [false, true]) {
      const fit = fitStacker([noise[0], noise[1], good, noise[2], noise[3], noise[4]], y, "binary", 1, { nonNegative });
      const total = fit.weights.reduce((a, w) => a + Math.abs(w), 0);
      expect(fit.weights[2] / total).toBeGreaterThan(0.9);
      expect(Math.abs(fit.weights[2] - 1)).toBeLessThan(0.15);
    }
    const values = Float64Array.from({ length: n }, () => rng.normal());
    const close = Float32Array.from(values, (v) => v + 0.1 * rng.normal());
    const unrelated = Array.from({ length: 3 }, () => Float32Array.from({ length: n }, () => rng.normal()));
    const ridge = fitStacker([unrelated[0], close, unrelated[1], unrelated[2]], values, "regression", 1, { nonNegative: true });
    expect(ridge.weights[1]).toBeGreaterThan(0.95);
    for (const m of [0, 2, 3]) expect(Math.abs(ridge.weights[m])).toBeLessThan(0.02);
  });
});

describe("bounded solvers", () => {
  it("NNLS (Lawson & Hanson 1974) keeps the positive part and re-solves the rest", () => {
    // Unconstrained solution of [[2,1],[1,2]]x = [1,-1] is [1,-1]; with x ≥ 0, x2 = 0 and 2·x1 = 1 (worked by hand).
    const x = nonNegativeLeastSquares(Float64Array.of(2, 1, 1, 2), Float64Array.of(1, -1), 2);
    expect(x[0]).toBeCloseTo(0.5, 14);
    expect(x[1]).toBe(0);
    expect(Array.from(nonNegativeLeastSquares(Float64Array.of(1, 0, 0, 0, 1, 0, 0, 0, 1), Float64Array.of(1, -1, 2), 3))).toEqual([1, 0, 2]);
  });

  it("spectral projected gradient reaches the projection of a quadratic's minimum on the box", () => {
    const centre = Float64Array.of(1, -2, 3);
    const objective = {
      size: 3,
      evaluate(x: Float64Array, gradient: Float64Array): number {
        let f = 0;
        for (let i = 0; i < 3; i++) {
          const d = x[i] - centre[i];
          f += (i + 1) * d * d;
          gradient[i] = 2 * (i + 1) * d;
        }
        return f;
      },
    };
    const result = minimizeOnBox(objective, new Float64Array(3), Float64Array.of(0, 0, -Infinity), { maxIterations: 1000, tolerance: 1e-12 });
    expect(result.converged).toBe(true);
    expect(result.x[0]).toBeCloseTo(1, 10);
    expect(result.x[1]).toBe(0);
    expect(result.x[2]).toBeCloseTo(3, 10);
  });
});

describe("permutation importance (Breiman 2001; Fisher, Rudin & Dominici 2019)", () => {
  it("is zero for a feature the predictor ignores and positive for the one it uses", () => {
    const rng = createRng("ensembles-test", "importance");
    const n = 500;
    const used = Float32Array.from({ length: n }, () => rng.normal());
    const ignored = Float32Array.from({ length: n }, () => rng.normal());
    const y = Int32Array.from(used, (v) => (v + 0.3 * rng.normal() > 0 ? 1 : 0));
    const columns: FeatureColumn[] = [
      { name: "used", kind: "numeric", values: used },
      { name: "ignored", kind: "numeric", values: ignored },
    ];
    const predict = (cols: readonly FeatureColumn[]): Float64Array => {
      const c = cols[0];
      if (c.kind === "categorical") throw new Error("numeric expected");
      return toFullWidth("binary", Float64Array.from(c.values, (v) => sigmoid(3 * v)));
    };
    const result = permutationImportance({ columns, target: y, metric: averagePrecision, width: 2, predict, repeats: 5, rng: createRng("importance") });
    expect(result.features[1]).toMatchObject({ name: "ignored", mean: 0, std: 0 });
    expect(result.features[0].mean).toBeGreaterThan(0.3);
    expect(result.features[0].drops).toHaveLength(5);
  });
});

describe("the exported predictor's schema", () => {
  it("refuses a predictor whose member has no model, naming the member", () => {
    const exported = {
      format: "nightshift-ensemble",
      version: 1,
      run: "r",
      created_at: "2026-01-01T00:00:00Z",
      nightshift_version: "0.1.0",
      task: "binary",
      target: { name: "y", labels: ["no", "yes"] },
      metric: "average_precision",
      columns: [{ name: "x", kind: "numeric" }],
      ensemble: { kind: "selection", members: [{ trial: 3, weight: 1 }] },
      models: [],
      estimates: { out_of_fold: { mean: null, std: null }, nested: { mean: null, std: null }, holdout: null },
    };
    const parsed = ExportedEnsembleSchema.safeParse(exported);
    expect(parsed.success).toBe(false);
    expect(parsed.error?.issues[0].message).toMatch(/no model for trial 3/);
    expect(parsed.error?.issues[0].path).toEqual(["ensemble", "members", 0, "trial"]);
  });

  it("rows of a fold and the other folds partition the rows", () => {
    const set = { foldOfRow: Int32Array.of(0, 1, 2, 0, 1, 2, 0) };
    expect(Array.from(rowsOfFold(set, 0, true))).toEqual([0, 3, 6]);
    expect(Array.from(rowsOfFold(set, 0, false))).toEqual([1, 2, 4, 5]);
  });
});
