import { allRows, createRng, InputError } from "@nightshift/core";
import { describe, expect, it } from "vitest";
import { type BoostedParams, boostedLearner, FitError, ParamError, parseBoostedParams } from "../src/index.js";
import { categorical, classes, noisyBinary, numeric, trainView, values } from "./boosted-data.js";
import { averagePrecision, column } from "./boosted-scores.js";
import { validationSplit } from "../src/boosted/validation-split.js";

const params = (overrides: Partial<BoostedParams> = {}): BoostedParams => boostedLearner.params.parse(overrides);

describe("boosted parameters", () => {
  it("fills the documented defaults", () => {
    expect(params()).toEqual({
      rounds: 200,
      learning_rate: 0.1,
      leaves: 31,
      depth: null,
      min_leaf: 20,
      min_hessian: 1e-3,
      l2: 0,
      min_gain: 0,
      row_sample: 1,
      split_features: 1,
      bins: 255,
      early_stop: 0,
      patience: 10,
      class_weight: "none",
    });
  });

  it("names the family, the parameter and the allowed range of a bad value", () => {
    expect(() => parseBoostedParams({ learning_rate: 2 })).toThrow("boosted.learning_rate: must be > 0 and <= 1 (got 2)");
    expect(() => parseBoostedParams({ leaves: 1 })).toThrow("boosted.leaves: must be an integer in [2, 4096] (got 1)");
    expect(() => parseBoostedParams({ depth: 2.5 })).toThrow("boosted.depth: must be an integer >= 1, or null for no limit (got 2.5)");
    expect(() => parseBoostedParams({ early_stop: 0.7 })).toThrow("boosted.early_stop: must be in [0, 0.5] (0 = off) (got 0.7)");
    expect(() => parseBoostedParams({ class_weight: "auto" })).toThrow('boosted.class_weight: must be one of none, balanced (got "auto")');
    expect(() => parseBoostedParams({ rounds: "many" })).toThrow('boosted.rounds: must be an integer in [1, 10000] (got "many")');
    expect(() => parseBoostedParams({ trees: 10 })).toThrow(/^boosted\.trees: unknown parameter \(allowed: rounds, learning_rate/);
    expect(() => parseBoostedParams({ bins: 256 })).toThrow(ParamError);
  });
});

describe("boosted fitting", () => {
  it("reaches average precision 1 on the training rows of a separable set", () => {
    const n = 200;
    const rng = createRng("separable");
    const x = Array.from({ length: n }, () => rng.normal());
    const z = Array.from({ length: n }, () => rng.normal());
    const y = x.map((v, i) => (v + 0.3 * z[i] > 0.2 ? 1 : 0));
    const view = trainView([numeric("x", x), numeric("z", z)], classes(y));
    const model = boostedLearner.fit(view, params({ rounds: 50, min_leaf: 2 }), createRng(1));
    const p = boostedLearner.predict(model, view);
    expect(averagePrecision(y, column(p, 2, 1))).toBe(1);
  });

  it("returns [P(class 0), P(class 1)] per row for a binary task", () => {
    const { columns, target } = noisyBinary(300, 1);
    const view = trainView(columns, target);
    const p = boostedLearner.predict(boostedLearner.fit(view, params({ rounds: 10 }), createRng(1)), view);
    expect(p.length).toBe(600);
    for (let i = 0; i < 300; i++) expect(p[2 * i] + p[2 * i + 1]).toBeCloseTo(1, 12);
  });

  it("never splits on a constant feature", () => {
    const { columns, target } = noisyBinary(400, 2);
    const constant = numeric("constant", new Array(400).fill(3.5));
    const view = trainView([constant, ...columns], target);
    const model = boostedLearner.fit(view, params({ rounds: 30, leaves: 8, min_leaf: 5 }), createRng(1));
    expect(model.trees.feature.filter((f) => f >= 0).length).toBeGreaterThan(0);
    expect(Array.from(model.trees.feature).includes(0)).toBe(false);
  });

  it("gives the hand-computed leaf values after one split with learning rate 1 and λ = 0", () => {
    // x = [1, 2, 3, 4], y = [1, 1, 3, 5]; F_0 = mean(y) = 2.5; squared error g = F − y = [1.5, 1.5, −0.5, −2.5], h = 1.
    // Thresholds (G_L²/H_L + G_R²/H_R): x ≤ 1: 1.5² + 1.5²/3 = 3; x ≤ 2: 3²/2 + 3²/2 = 9; x ≤ 3: 2.5²/3 + 2.5² = 8.33.
    // Best: x ≤ 2 (bin edge 2.5). Leaves: −G/H + F_0 = −3/2 + 2.5 = 1 and 3/2 + 2.5 = 4.
    const view = trainView([numeric("x", [1, 2, 3, 4])], values([1, 1, 3, 5]));
    const model = boostedLearner.fit(view, params({ rounds: 1, learning_rate: 1, l2: 0, leaves: 2, min_leaf: 1 }), createRng(1));
    const p = boostedLearner.predict(model, { columns: [numeric("x", [1, 2, 2.4, 2.6, 3, 4, 100])], rows: allRows(7) });
    expect(Array.from(p)).toEqual([1, 1, 1, 4, 4, 4, 4]);
  });

  it("lowers the training loss of a regression with every round", () => {
    const rng = createRng("friedman-like");
    const n = 300;
    const x = Array.from({ length: 3 }, () => Array.from({ length: n }, () => rng.next()));
    const y = x[0].map((v, i) => 10 * Math.sin(Math.PI * v * x[1][i]) + 5 * x[2][i] + rng.normal());
    const view = trainView(x.map((v, f) => numeric(`x${f}`, v)), values(y));
    let previous = Infinity;
    for (let rounds = 1; rounds <= 15; rounds++) {
      const p = boostedLearner.predict(boostedLearner.fit(view, params({ rounds, leaves: 8, min_leaf: 5 }), createRng(1)), view);
      const mse = y.reduce((sum, v, i) => sum + (v - p[i]) ** 2, 0) / n;
      expect(mse).toBeLessThan(previous);
      previous = mse;
    }
  });

  it("gives multiclass probabilities that sum to 1, one column per class", () => {
    const rng = createRng("three-classes");
    const n = 300;
    const x = Array.from({ length: n }, () => rng.next() * 3);
    const w = Array.from({ length: n }, () => rng.normal());
    const y = x.map((v) => Math.min(2, Math.floor(v + 0.3 * rng.normal())));
    const view = trainView([numeric("x", x), numeric("w", w)], classes(y.map((v) => Math.max(0, v)), ["a", "b", "c"]));
    const model = boostedLearner.fit(view, params({ rounds: 20, leaves: 4, min_leaf: 5 }), createRng(1));
    expect(model.trees.treeCount).toBe(60);
    const p = boostedLearner.predict(model, view);
    expect(p.length).toBe(3 * n);
    for (let i = 0; i < n; i++) expect(p[3 * i] + p[3 * i + 1] + p[3 * i + 2]).toBeCloseTo(1, 12);
    const low = x.findIndex((v) => v < 0.5);
    const high = x.findIndex((v) => v > 2.5);
    expect(p[3 * low]).toBeGreaterThan(0.5);
    expect(p[3 * high + 2]).toBeGreaterThan(0.5);
  });

  it("learns where missing values go: here a missing reading means the event", () => {
    const rng = createRng("missing-means-positive");
    const n = 400;
    const y = Array.from({ length: n }, (_, i) => (i % 4 === 0 ? 1 : 0));
    // Positives have no reading; negatives have readings spread over the whole range.
    const x = y.map((label) => (label === 1 ? NaN : rng.normal()));
    const view = trainView([numeric("x", x)], classes(y));
    for (const minLeaf of [5, 1]) {
      const model = boostedLearner.fit(view, params({ rounds: 20, leaves: 4, min_leaf: minLeaf }), createRng(1));
      const p = boostedLearner.predict(model, { columns: [numeric("x", [NaN, -1, 0, 1])], rows: allRows(4) });
      expect(p[1]).toBeGreaterThan(0.9);
      for (const i of [1, 2, 3]) expect(p[2 * i + 1]).toBeLessThan(0.1);
    }
  });

  it("sends missing values to the child with more rows when a split saw none", () => {
    const n = 100;
    const x = Array.from({ length: n }, (_, i) => i / n);
    const y = x.map((v) => (v > 0.8 ? 1 : 0));
    const view = trainView([numeric("x", x)], classes(y));
    const model = boostedLearner.fit(view, params({ rounds: 1, leaves: 2, min_leaf: 1, learning_rate: 1 }), createRng(1));
    const p = boostedLearner.predict(model, { columns: [numeric("x", [NaN, 0.1, 0.9])], rows: allRows(3) });
    expect(p[1]).toBe(p[3]);
    expect(p[5]).toBeGreaterThan(p[3]);
  });

  it("splits a categorical feature into the category sets that separate the classes in one split", () => {
    // Categories a..f; the event happens for a, c, f: no threshold on the codes separates them.
    const vocabulary = ["a", "b", "c", "d", "e", "f"];
    const positive = new Set([0, 2, 5]);
    const codes = Array.from({ length: 240 }, (_, i) => i % 6);
    const y = codes.map((c) => (positive.has(c) ? 1 : 0));
    const view = trainView([categorical("site", codes, vocabulary)], classes(y));
    const model = boostedLearner.fit(view, params({ rounds: 1, leaves: 2, min_leaf: 1, learning_rate: 1 }), createRng(1));
    expect(model.trees.treeCount).toBe(1);
    expect(model.trees.feature[0]).toBe(0);
    expect(model.trees.set[0]).toBe(0);
    const p = boostedLearner.predict(model, { columns: [categorical("site", [0, 1, 2, 3, 4, 5], vocabulary)], rows: allRows(6) });
    // Each pure leaf takes one Newton step from the prior 1/2 (g = p − y = ∓1/2, h = 1/4 per row):
    // w = −G/H = ±2, so P(event) = σ(2) for a, c, f and σ(−2) for b, d, e.
    for (const c of [0, 2, 5]) expect(p[2 * c + 1]).toBeCloseTo(1 / (1 + Math.exp(-2)), 12);
    for (const c of [1, 3, 4]) expect(p[2 * c + 1]).toBeCloseTo(1 / (1 + Math.exp(2)), 12);
  });

  it("routes a category never seen in training like a missing value", () => {
    const vocabulary = ["a", "b", "c", "unseen"];
    const codes = Array.from({ length: 300 }, (_, i) => (i % 10 === 0 ? -1 : i % 3));
    const y = codes.map((c) => (c === -1 || c === 1 ? 1 : 0));
    const view = trainView([categorical("site", codes, vocabulary)], classes(y));
    const model = boostedLearner.fit(view, params({ rounds: 10, leaves: 4, min_leaf: 5 }), createRng(1));
    const p = boostedLearner.predict(model, { columns: [categorical("site", [3, -1, 0], vocabulary)], rows: allRows(3) });
    expect(p[1]).toBe(p[3]);
    expect(p[1]).toBeGreaterThan(p[5]);
  });

  it("weights classes n / (C · n_c) with class_weight balanced, lifting the rare class", () => {
    const { columns, target } = noisyBinary(400, 3);
    const rare = classes(Array.from(target.codes, (c, i) => (c === 1 && i % 4 === 0 ? 1 : 0)));
    const view = trainView(columns, rare);
    const mean = (weights: "none" | "balanced") => {
      const p = boostedLearner.predict(boostedLearner.fit(view, params({ rounds: 5, class_weight: weights }), createRng(1)), view);
      return column(p, 2, 1).reduce((a, b) => a + b, 0) / 400;
    };
    expect(mean("balanced")).toBeGreaterThan(2 * mean("none"));
  });

  it("refuses a fit on one class and a fit with no usable feature", () => {
    const x = numeric("x", [1, 2, 3, 4]);
    expect(() => boostedLearner.fit(trainView([x], classes([1, 1, 1, 1])), params(), createRng(1))).toThrow(FitError);
    expect(() => boostedLearner.fit(trainView([x], classes([1, 1, 1, 1])), params(), createRng(1))).toThrow(/only one class/);
    const flat = [numeric("c", [2, 2, 2, 2]), numeric("m", [NaN, NaN, NaN, NaN])];
    expect(() => boostedLearner.fit(trainView(flat, classes([0, 1, 0, 1])), params(), createRng(1))).toThrow(/no usable feature/);
    expect(() => boostedLearner.fit(trainView([x], values([1, 2, 3, 4])), params({ class_weight: "balanced" }), createRng(1))).toThrow(FitError);
  });

  it("refuses to predict on columns of another kind or count than it was fitted on", () => {
    const { columns, target } = noisyBinary(100, 9);
    const model = boostedLearner.fit(trainView(columns, target), params({ rounds: 3 }), createRng(1));
    const swapped = [categorical("x0", new Array(100).fill(0), ["a"]), columns[1], columns[2]];
    expect(() => boostedLearner.predict(model, { columns: swapped, rows: allRows(100) })).toThrow(/x0: fitted as numeric, given categorical/);
    expect(() => boostedLearner.predict(model, { columns: columns.slice(1), rows: allRows(100) })).toThrow(/fitted on 3 features, given 2/);
  });

  it("uses only the rows of the view", () => {
    const { columns, target } = noisyBinary(400, 4);
    const rows = Uint32Array.from({ length: 200 }, (_, i) => 2 * i);
    const subset = trainView(columns, target, "binary", rows);
    const copied = trainView(
      columns.map((c) => numeric(c.name, Array.from(rows, (r) => c.values[r]))),
      classes(Array.from(rows, (r) => target.codes[r])),
    );
    const a = boostedLearner.fit(subset, params({ rounds: 10 }), createRng(1));
    const b = boostedLearner.fit(copied, params({ rounds: 10 }), createRng(1));
    expect(boostedLearner.predict(a, subset)).toEqual(boostedLearner.predict(b, copied));
  });
});

describe("boosted early stopping", () => {
  it("stops before `rounds` when the validation loss stops falling and keeps the best round", () => {
    // Few noisy rows, a large learning rate and small leaves: after a few rounds trees only overfit.
    const { columns, target } = noisyBinary(600, 1);
    const view = trainView(columns, target);
    const settings = { rounds: 300, learning_rate: 0.3, leaves: 16, min_leaf: 2, early_stop: 0.25 };
    const stopped = boostedLearner.fit(view, params({ ...settings, patience: 5 }), createRng(7));
    const stopping = stopped.stopping;
    if (stopping === null) throw new Error("early stopping did not run");
    expect(stopping.bestRound).toBeGreaterThan(0);
    expect(stopping.roundsRun).toBeLessThan(300);
    expect(stopping.roundsRun).toBe(stopping.bestRound + 5);
    expect(stopped.trees.treeCount).toBe(stopping.bestRound);
    // The same stream and exactly the best round's count grow the same trees: the kept model is that one.
    const best = boostedLearner.fit(view, params({ ...settings, rounds: stopping.bestRound, patience: 1000 }), createRng(7));
    expect(boostedLearner.predict(stopped, view)).toEqual(boostedLearner.predict(best, view));
  });

  it("holds out a seeded slice with the class shares of the whole (stratified)", () => {
    const codes = Int32Array.from({ length: 1000 }, (_, i) => (i % 10 === 0 ? 1 : i % 10 < 4 ? 2 : 0));
    const split = validationSplit(1000, 0.2, createRng(3), codes, 3);
    expect(split.validation.length).toBe(200);
    expect(split.fit.length).toBe(800);
    const share = (rows: Uint32Array, c: number) => Array.from(rows).filter((r) => codes[r] === c).length / rows.length;
    for (const c of [0, 1, 2]) expect(share(split.validation, c)).toBeCloseTo(share(allRows(1000), c), 10);
    expect(new Set([...split.fit, ...split.validation]).size).toBe(1000);
    const again = validationSplit(1000, 0.2, createRng(3), codes, 3);
    const other = validationSplit(1000, 0.2, createRng(4), codes, 3);
    expect(again.validation).toEqual(split.validation);
    expect(other.validation).not.toEqual(split.validation);
  });
});

describe("boosted determinism", () => {
  it("gives identical predictions for the same random stream, and different ones with row sampling under another seed", () => {
    const { columns, target } = noisyBinary(500, 6);
    const view = trainView(columns, target);
    const p = params({ rounds: 20, row_sample: 0.5, split_features: 0.67 });
    const a = boostedLearner.predict(boostedLearner.fit(view, p, createRng("seed", 1)), view);
    const b = boostedLearner.predict(boostedLearner.fit(view, p, createRng("seed", 1)), view);
    const c = boostedLearner.predict(boostedLearner.fit(view, p, createRng("seed", 2)), view);
    expect(b).toEqual(a);
    expect(c).not.toEqual(a);
  });
});

describe("boosted and monotone transforms (METHODS.md §12)", () => {
  it("barely changes its predictions when a feature goes through x → exp(x) or x → 3x + 7", () => {
    const { columns, target } = noisyBinary(2000, 7);
    const view = trainView(columns, target);
    const p = params({ rounds: 30, leaves: 8 });
    const base = boostedLearner.predict(boostedLearner.fit(view, p, createRng(1)), view);
    for (const transform of [Math.exp, (v: number) => 3 * v + 7]) {
      const moved = [numeric("x0", columns[0].values.map(transform)), columns[1], columns[2]];
      const movedView = trainView(moved, target);
      const q = boostedLearner.predict(boostedLearner.fit(movedView, p, createRng(1)), movedView);
      // Quantile bins follow ranks, so bins (and predictions) only move where float rounding of
      // the transform ties two values or shifts a cut; 1e-9 allows for that rounding.
      let worst = 0;
      for (let i = 0; i < base.length; i++) worst = Math.max(worst, Math.abs(base[i] - q[i]));
      expect(worst).toBeLessThan(1e-9);
    }
  });
});

describe("boosted serialisation", () => {
  it("round-trips through JSON text with bit-identical predictions", () => {
    const rng = createRng("round-trip");
    const n = 400;
    const x = Array.from({ length: n }, (_, i) => (i % 13 === 0 ? NaN : rng.normal()));
    const codes = Array.from({ length: n }, (_, i) => (i % 17 === 0 ? -1 : rng.int(5)));
    const y = x.map((v, i) => (Number.isNaN(v) || (codes[i] === 2 && v > 0) || v > 1 ? 1 : 0));
    const columns = [numeric("x", x), categorical("c", codes, ["a", "b", "c", "d", "e"])];
    for (const [target, task] of [
      [classes(y), "binary"],
      [classes(codes.map((c) => (c < 0 ? 0 : c % 3)), ["p", "q", "r"]), "multiclass"],
      [values(x.map((v, i) => (Number.isNaN(v) ? 3 : v) + codes[i])), "regression"],
    ] as const) {
      const view = trainView(columns, target, task);
      const model = boostedLearner.fit(view, params({ rounds: 15, leaves: 6, min_leaf: 3, learning_rate: 0.3 }), createRng(2));
      const text = JSON.stringify(boostedLearner.toJSON(model));
      const back = boostedLearner.fromJSON(JSON.parse(text));
      const before = boostedLearner.predict(model, view);
      const after = boostedLearner.predict(back, view);
      expect(Buffer.from(after.buffer).equals(Buffer.from(before.buffer))).toBe(true);
    }
  });

  it("rejects a damaged model file with the key that is wrong", () => {
    const { columns, target } = noisyBinary(200, 8);
    const json = boostedLearner.toJSON(boostedLearner.fit(trainView(columns, target), params({ rounds: 3 }), createRng(1)));
    const trees = json.trees as Record<string, unknown>;
    expect(() => boostedLearner.fromJSON({ ...json, trees: { ...trees, left: Buffer.from(new Int32Array([5, 5, 5])).toString("base64") } })).toThrow(
      /boosted model trees\.left/,
    );
    expect(() => boostedLearner.fromJSON({ ...json, outputs: 0 })).toThrow(InputError);
  });
});
