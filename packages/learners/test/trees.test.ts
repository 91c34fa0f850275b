import { createRng, type TrainView } from "@nightshift/core";
import { describe, expect, it } from "vitest";
import { binRows, fitBinMapper } from "../src/binning/bin-mapper.js";
import { FitError } from "../src/learner.js";
import { ParamError, parseParams } from "../src/params.js";
import { TreeGrower } from "../src/trees/grow-tree.js";
import { CRITERION_GINI } from "../src/trees/impurity.js";
import { extraTreesLearner, forestLearner, type TreeEnsembleModel, treeLearner } from "../src/trees/index.js";
import {
  accuracy,
  argmax,
  averagePrecision,
  categorical,
  classes,
  column,
  noisyRule,
  numeric,
  rowsOf,
  trainView,
  values,
} from "./tree-fixtures.js";

const families = [
  { name: "tree", learner: treeLearner },
  { name: "forest", learner: forestLearner },
  { name: "extra_trees", learner: extraTreesLearner },
] as const;

function fitFamily(family: (typeof families)[number], view: TrainView, raw: Record<string, unknown> = {}, seed = 1): TreeEnsembleModel {
  const { learner } = family;
  const params = parseParams(learner.family, learner.params, raw);
  return learner.fit(view, params as never, createRng(seed, "test"));
}

describe("tree families: fitting their training rows", () => {
  // Two well separated groups: x0 < 0 is class 0, x0 > 0 class 1, plus an irrelevant feature.
  const n = 120;
  const rng = createRng("separable");
  const x0 = Array.from({ length: n }, (_, i) => (i % 2 === 0 ? -1 : 1) * (0.2 + rng.next()));
  const x1 = Array.from({ length: n }, () => rng.next());
  const y = x0.map((v) => (v > 0 ? 1 : 0));
  const view = trainView([numeric("x0", x0), numeric("x1", x1)], classes(y));

  for (const family of families) {
    it(`${family.name}: a separable set reaches AP 1 and accuracy 1 on its training rows`, () => {
      const model = fitFamily(family, view, family.name === "tree" ? {} : { trees: 20 });
      const p = family.learner.predict(model, rowsOf(view));
      expect(p.length).toBe(2 * n);
      expect(averagePrecision(column(p, 2, 1), y)).toBe(1);
      expect(accuracy(argmax(p, 2), Int32Array.from(y))).toBe(1);
      for (let r = 0; r < n; r++) expect(p[2 * r] + p[2 * r + 1]).toBeCloseTo(1, 12);
    });
  }

  it("an unlimited-depth tree fits even pure-noise labels on distinct rows (METHODS.md §12, common practice)", () => {
    const noise = noisyRule(200, 2, 7);
    const labels = createRng("labels");
    const random = Int32Array.from({ length: 200 }, () => (labels.next() < 0.5 ? 1 : 0));
    const model = fitFamily(families[0], trainView(noise.columns, classes(random)));
    const p = treeLearner.predict(model, { columns: noise.columns, rows: Uint32Array.from({ length: 200 }, (_, i) => i) });
    expect(accuracy(argmax(p, 2), random)).toBe(1);
  });
});

describe("tree: known answers", () => {
  it("a depth-1 tree on one feature picks the threshold a hand calculation gives", () => {
    // x = 1..9, y = 0 0 0 1 0 1 1 1 1. Weighted Gini of each cut "x <= k | x > k" (n_L/n·G_L + n_R/n·G_R):
    //   k=1: 0 + 8/9·(1 − (3/8)² − (5/8)²) = 0.4167     k=5: 5/9·(1 − 0.8² − 0.2²) + 0 = 0.1778  <- smallest
    //   k=2: 7/9·(1 − (2/7)² − (5/7)²) = 0.3175         k=6: 6/9·(1 − (4/6)² − (2/6)²) = 0.2963
    //   k=3: 6/9·(1 − (1/6)² − (5/6)²) = 0.1852         k=7: 7/9·(1 − (4/7)² − (3/7)²) = 0.3810
    //   k=4: 4/9·0.375 + 5/9·0.32 = 0.3444              k=8: 8/9·0.5 = 0.4444
    // So the cut lies between 5 and 6: the bin edge half-way, 5.5; leaves P(1) = 1/5 and 4/4.
    const x = [1, 2, 3, 4, 5, 6, 7, 8, 9];
    const view = trainView([numeric("x", x)], classes([0, 0, 0, 1, 0, 1, 1, 1, 1]));
    const model = fitFamily(families[0], view, { depth: 1 });
    const tree = model.trees[0];
    expect(tree.nodeCount).toBe(3);
    const bins = model.mapper.features[0];
    expect(bins.kind === "numeric" && bins.upperEdges[tree.threshold[0]]).toBe(5.5);
    const probe = [5.5, 5.5000001];
    const p = treeLearner.predict(model, { columns: [numeric("x", probe)], rows: Uint32Array.from([0, 1]) });
    expect(Array.from(p)).toEqual([0.8, 0.2, 0, 1]);
  });

  it("the entropy criterion can choose another cut than Gini, as a hand calculation shows", () => {
    // x = 1..8, y = 0 0 0 0 1 0 0 1. Cuts "x <= 4" and "x <= 7" (the others score worse under both):
    //   Gini:    k=4: 4/8·(1 − 0.5² − 0.5²) = 0.25        k=7: 7/8·(1 − (1/7)² − (6/7)²) = 0.2143  <- Gini's pick
    //   entropy: k=4: 4/8·ln 2 = 0.3466  <- entropy's    k=7: 7/8·(−(1/7)ln(1/7) − (6/7)ln(6/7)) = 0.3589
    const view = trainView([numeric("x", [1, 2, 3, 4, 5, 6, 7, 8])], classes([0, 0, 0, 0, 1, 0, 0, 1]));
    const edge = (model: TreeEnsembleModel) => {
      const bins = model.mapper.features[0];
      return bins.kind === "numeric" ? bins.upperEdges[model.trees[0].threshold[0]] : NaN;
    };
    expect(edge(fitFamily(families[0], view, { depth: 1 }))).toBe(7.5);
    expect(edge(fitFamily(families[0], view, { depth: 1, criterion: "entropy" }))).toBe(4.5);
  });

  it("never splits on a constant feature", () => {
    const { columns, y } = noisyRule(300, 3, 3, 0.5);
    const constant = numeric("constant", new Array(300).fill(4.2));
    const view = trainView([constant, ...columns], classes(y));
    for (const family of families) {
      const model = fitFamily(family, view, family.name === "tree" ? {} : { trees: 10, split_features: 0.25 });
      for (const tree of model.trees) expect(Array.from(tree.feature)).not.toContain(0);
      expect(model.trees.some((tree) => tree.nodeCount > 1)).toBe(true);
    }
  });

  it("a strictly increasing transform of a feature leaves predictions unchanged (METHODS.md §12, common practice)", () => {
    const { columns, y } = noisyRule(600, 3, 11, 0.4);
    const x0 = columns[0].values;
    const variants = [
      columns,
      [numeric("x0", Array.from(x0, (v) => Math.exp(v))), columns[1], columns[2]],
      [numeric("x0", Array.from(x0, (v) => 3 * v + 7)), columns[1], columns[2]],
    ];
    for (const family of families) {
      const predictions = variants.map((cols) => {
        const view = trainView(cols, classes(y));
        return Array.from(family.learner.predict(fitFamily(family, view, family.name === "tree" ? {} : { trees: 5 }), rowsOf(view)));
      });
      expect(predictions[1]).toEqual(predictions[0]);
      expect(predictions[2]).toEqual(predictions[0]);
    }
  });

  it("sends missing values to the side learned from the training rows", () => {
    // x = 0..9 with y = (x >= 5); the rows with a missing x are class 1 in the first set and
    // class 0 in the second, so the best depth-1 split puts them right, then left.
    const x = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, NaN, NaN, NaN];
    const xs = [0, 0, 0, 0, 0, 1, 1, 1, 1, 1];
    const probe = { columns: [numeric("x", [NaN])], rows: Uint32Array.from([0]) };
    const toRight = fitFamily(families[0], trainView([numeric("x", x)], classes([...xs, 1, 1, 1])), { depth: 1 });
    expect(Array.from(treeLearner.predict(toRight, probe))).toEqual([0, 1]);
    const toLeft = fitFamily(families[0], trainView([numeric("x", x)], classes([...xs, 0, 0, 0])), { depth: 1 });
    expect(Array.from(treeLearner.predict(toLeft, probe))).toEqual([1, 0]);
  });

  it("sends missing values to the larger child when the training rows had none", () => {
    const view = trainView([numeric("x", [1, 2, 3, 4, 5, 6, 7, 8])], classes([0, 0, 0, 0, 0, 0, 1, 1]));
    const model = fitFamily(families[0], view, { depth: 1 });
    const p = treeLearner.predict(model, { columns: [numeric("x", [NaN])], rows: Uint32Array.from([0]) });
    expect(Array.from(p)).toEqual([1, 0]);
  });

  it("separates categories with different rates in one split, whatever their codes", () => {
    // Categories a c e are always class 1, b d f never: no threshold on the codes separates them.
    const names = ["a", "b", "c", "d", "e", "f"];
    const cats = Array.from({ length: 60 }, (_, i) => names[i % 6]);
    const y = cats.map((c) => ("ace".includes(c) ? 1 : 0));
    const view = trainView([categorical("site", cats)], classes(y));
    const model = fitFamily(families[0], view, { depth: 1 });
    expect(model.trees[0].nodeCount).toBe(3);
    const p = treeLearner.predict(model, rowsOf(view));
    expect(column(p, 2, 1)).toEqual(y);
  });

  it("separates three classes of categories within depth 2 (one-vs-rest orderings)", () => {
    const names = ["a", "b", "c", "d", "e", "f", "g"];
    const classOf: Record<string, number> = { a: 2, b: 0, c: 1, d: 2, e: 0, f: 1, g: 2 };
    const cats = Array.from({ length: 70 }, (_, i) => names[(i * 3) % 7]);
    const y = Int32Array.from(cats, (c) => classOf[c]);
    const view = trainView([categorical("site", cats)], classes(y, ["p", "q", "r"]));
    const model = fitFamily(families[0], view, { depth: 2 });
    const p = treeLearner.predict(model, rowsOf(view));
    expect(p.length).toBe(3 * 70);
    expect(accuracy(argmax(p, 3), y)).toBe(1);
  });

  it("reduces squared error against predicting the mean (regression)", () => {
    const rng = createRng("regression");
    const n = 400;
    const x = Array.from({ length: n }, () => rng.next() * 6);
    const ys = x.map((v) => Math.sin(v) + 0.1 * rng.normal());
    const view = trainView([numeric("x", x), numeric("z", Array.from({ length: n }, () => rng.next()))], values(ys));
    const mean = ys.reduce((a, b) => a + b, 0) / n;
    const baseline = ys.reduce((a, b) => a + (b - mean) ** 2, 0) / n;
    for (const family of families) {
      const model = fitFamily(family, view, family.name === "tree" ? { depth: 4 } : { trees: 10, depth: 6 });
      const p = family.learner.predict(model, rowsOf(view));
      expect(p.length).toBe(n);
      const mse = ys.reduce((a, b, i) => a + (b - p[i]) ** 2, 0) / n;
      expect(mse).toBeLessThan(0.2 * baseline);
    }
  });

  it("class_weight balanced moves probabilities toward the minority class", () => {
    const { columns, y } = noisyRule(500, 2, 5, 1.5);
    // Keep one row in eight of class 1: a minority.
    const keep = Array.from(y.keys()).filter((r) => y[r] === 0 || r % 8 === 0);
    const cols = columns.map((c) => numeric(c.name, keep.map((r) => c.values[r])));
    const ys = keep.map((r) => y[r]);
    const view = trainView(cols, classes(ys));
    for (const family of families) {
      const mean = (classWeight: string) => {
        const raw = family.name === "tree" ? { depth: 3, class_weight: classWeight } : { trees: 10, depth: 3, class_weight: classWeight };
        const p = family.learner.predict(fitFamily(family, view, raw), rowsOf(view));
        return column(p, 2, 1).reduce((a, b) => a + b, 0) / ys.length;
      };
      expect(mean("balanced")).toBeGreaterThan(mean("none") + 0.1);
    }
  });
});

describe("tree families: randomness, multiclass and serialisation", () => {
  const { columns, y } = noisyRule(300, 6, 21, 0.5);
  const view = trainView(columns, classes(y));

  for (const family of families.slice(1)) {
    it(`${family.name}: the same seed gives identical predictions, another seed a different ensemble`, () => {
      // Fresh rows: on its own training rows a fully grown ensemble without bootstrap is exact whatever the seed.
      const fresh = { columns: noisyRule(100, 6, 99).columns, rows: Uint32Array.from({ length: 100 }, (_, i) => i) };
      const a = family.learner.predict(fitFamily(family, view, { trees: 8 }, 1), fresh);
      const b = family.learner.predict(fitFamily(family, view, { trees: 8 }, 1), fresh);
      const c = family.learner.predict(fitFamily(family, view, { trees: 8 }, 2), fresh);
      expect(Array.from(b)).toEqual(Array.from(a));
      expect(Array.from(c)).not.toEqual(Array.from(a));
    });
  }

  it("extra_trees: bootstrap and row samples give working ensembles that differ from the full-row one", () => {
    const fresh = { columns: noisyRule(200, 6, 98).columns, rows: Uint32Array.from({ length: 200 }, (_, i) => i) };
    const freshLabels = noisyRule(200, 6, 98).y;
    const full = extraTreesLearner.predict(fitFamily(families[2], view, { trees: 20 }), fresh);
    for (const raw of [{ bootstrap: true }, { row_sample: 0.5 }, { bootstrap: true, row_sample: 0.3 }]) {
      const p = extraTreesLearner.predict(fitFamily(families[2], view, { trees: 20, ...raw }), fresh);
      expect(Array.from(p)).not.toEqual(Array.from(full));
      expect(averagePrecision(column(p, 2, 1), freshLabels)).toBeGreaterThan(0.85);
    }
  });

  it("forest: averages tree probabilities (soft vote) and generalises on held-out rows", () => {
    const all = noisyRule(800, 6, 4, 0.2);
    const train = Uint32Array.from({ length: 600 }, (_, i) => i);
    const test = Uint32Array.from({ length: 200 }, (_, i) => 600 + i);
    const target = classes(all.y);
    const trainViewOf: TrainView = { columns: all.columns, rows: train, task: "binary", target };
    const model = fitFamily(families[1], trainViewOf, { trees: 30 });
    const p = forestLearner.predict(model, { columns: all.columns, rows: test });
    const heldOut = all.y.subarray(600);
    expect(averagePrecision(column(p, 2, 1), heldOut)).toBeGreaterThan(0.9);
    const single = treeLearner.predict(fitFamily(families[0], trainViewOf), { columns: all.columns, rows: test });
    expect(averagePrecision(column(p, 2, 1), heldOut)).toBeGreaterThan(averagePrecision(column(single, 2, 1), heldOut));
    // Soft vote: the forest's probabilities are the mean of its trees' probabilities.
    const mean = new Float64Array(p.length);
    for (const tree of model.trees) {
      const own = forestLearner.predict({ ...model, trees: [tree] }, { columns: all.columns, rows: test });
      for (let i = 0; i < mean.length; i++) mean[i] += own[i] / model.trees.length;
    }
    for (let i = 0; i < p.length; i++) expect(p[i]).toBeCloseTo(mean[i], 12);
  });

  it("multiclass: one probability per class, rows summing to 1", () => {
    const labels = Int32Array.from(columns[0].values, (v, r) => (v < -0.3 ? 0 : v < 0.3 ? 1 : columns[1].values[r] > 0 ? 2 : 1));
    const mview = trainView(columns, classes(labels, ["a", "b", "c"]));
    for (const family of families) {
      const model = fitFamily(family, mview, family.name === "tree" ? {} : { trees: 10 });
      const p = family.learner.predict(model, rowsOf(mview));
      expect(p.length).toBe(3 * 300);
      for (let r = 0; r < 300; r++) expect(p[3 * r] + p[3 * r + 1] + p[3 * r + 2]).toBeCloseTo(1, 12);
      expect(accuracy(argmax(p, 3), labels)).toBeGreaterThan(0.95);
    }
  });

  it("round-trips through JSON with bit-identical predictions (numeric, categorical, missing)", () => {
    const rng = createRng("json");
    const n = 200;
    const withGaps = numeric("gappy", Array.from({ length: n }, () => (rng.next() < 0.2 ? NaN : rng.next())));
    const cat = categorical("colour", Array.from({ length: n }, (_, i) => (i % 11 === 0 ? null : ["red", "green", "blue", "grey"][i % 4])));
    const ys = Array.from({ length: n }, (_, i) => ((cat.codes[i] === 1 ? 1 : 0) ^ (withGaps.values[i] > 0.7 ? 1 : 0)) | (Number.isNaN(withGaps.values[i]) ? 1 : 0));
    const mixed = trainView([withGaps, cat, ...columns.slice(0, 2)], classes(ys));
    const regression = trainView([withGaps, cat, ...columns.slice(0, 2)], values(ys.map((v, i) => v + i / n)));
    for (const family of families) {
      for (const v of [mixed, regression]) {
        const model = fitFamily(family, v, family.name === "tree" ? {} : { trees: 5 });
        const json = JSON.parse(JSON.stringify(family.learner.toJSON(model)));
        const restored = family.learner.fromJSON(json);
        const before = family.learner.predict(model, rowsOf(v));
        const after = family.learner.predict(restored, rowsOf(v));
        expect(Buffer.from(after.buffer).equals(Buffer.from(before.buffer))).toBe(true);
      }
    }
  });

  it("refuses a damaged model file instead of looping", () => {
    const model = fitFamily(families[0], view);
    const json = treeLearner.toJSON(model);
    const trees = json.trees as Array<Record<string, unknown>>;
    const left = Buffer.from(new Int32Array(model.trees[0].nodeCount).buffer).toString("base64");
    const broken = { ...json, trees: [{ ...trees[0], left }] };
    expect(() => treeLearner.fromJSON(broken)).toThrow(/children out of order/);
    expect(() => forestLearner.fromJSON(json)).toThrow(/holds a tree model/);
  });
});

describe("tree families: refusals", () => {
  it("names the family, the parameter and the allowed range of an invalid value", () => {
    expect(() => parseParams("forest", forestLearner.params, { depth: 0 })).toThrow("forest.depth: must be an integer >= 1 or null (got 0)");
    expect(() => parseParams("extra_trees", extraTreesLearner.params, { trees: 6000 })).toThrow("extra_trees.trees: must be an integer in 1..5000 (got 6000)");
    expect(() => parseParams("forest", forestLearner.params, { split_features: 1.5 })).toThrow("forest.split_features: must be a number in (0, 1] or null (got 1.5)");
    expect(() => parseParams("tree", treeLearner.params, { bins: 256 })).toThrow("tree.bins: must be an integer in 2..255 (got 256)");
    expect(() => parseParams("tree", treeLearner.params, { criterion: "mse" })).toThrow('tree.criterion: must be one of gini, entropy (got "mse")');
    expect(() => parseParams("tree", treeLearner.params, { min_leaf: 1.5 })).toThrow("tree.min_leaf: must be an integer >= 1 (got 1.5)");
    expect(() => parseParams("tree", treeLearner.params, { trees: 10 })).toThrow(/^tree\.trees: unknown parameter \(allowed: criterion, depth/);
    const error = (() => {
      try {
        parseParams("forest", forestLearner.params, { depth: -1, bootstrap: "yes" });
      } catch (e) {
        return e;
      }
    })();
    expect(error).toBeInstanceOf(ParamError);
    expect((error as ParamError).paths).toEqual(["forest.depth", "forest.bootstrap"]);
  });

  it("fills defaults: bootstrap for forest, none for extra trees", () => {
    expect(parseParams("forest", forestLearner.params, {})).toMatchObject({ trees: 100, bootstrap: true, split_features: null, depth: null, min_leaf: 1 });
    expect(parseParams("extra_trees", extraTreesLearner.params, {})).toMatchObject({ trees: 100, bootstrap: false, row_sample: 1 });
  });

  it("gives a FitError for one class in the training rows, or no usable feature", () => {
    const { columns } = noisyRule(50, 2, 1);
    for (const family of families) {
      expect(() => fitFamily(family, trainView(columns, classes(new Array(50).fill(1))))).toThrow(FitError);
      expect(() => fitFamily(family, trainView(columns, classes(new Array(50).fill(1))))).toThrow(/only one class in the training rows/);
      const flat = [numeric("c", new Array(50).fill(3)), numeric("gone", new Array(50).fill(NaN))];
      expect(() => fitFamily(family, trainView(flat, classes(Array.from({ length: 50 }, (_, i) => i % 2))))).toThrow(/no usable feature/);
    }
  });
});

describe("tree grower: bin layouts", () => {
  it("grows the same trees whether small nodes read the row-major copy of the bins or the columns", () => {
    const { columns, y } = noisyRule(3000, 5, 8, 0.3);
    const view = trainView(columns, classes(y));
    const binned = binRows(fitBinMapper(view), view);
    const rowBins = new Uint8Array(3000 * 5);
    for (let f = 0; f < 5; f++) for (let r = 0; r < 3000; r++) rowBins[r * 5 + f] = binned.bins[f][r];
    const base = { bins: binned.bins, categorical: binned.categorical, usable: Int32Array.from([0, 1, 2, 3, 4]), classes: y, classCount: 2, values: null, classWeight: Float64Array.from([1, 1]) };
    for (const randomCuts of [false, true]) {
      const settings = { criterion: CRITERION_GINI, maxDepth: Infinity, minLeaf: 1, minSplit: 2, splitFeatures: 2, randomCuts } as const;
      const counts = new Float64Array(3000).fill(1);
      const grower = new TreeGrower({ ...base, rowBins }, settings, 3000);
      const withCopy = grower.grow(counts, createRng("layout"));
      const columnsOnly = new TreeGrower({ ...base, rowBins: null }, settings, 3000).grow(counts, createRng("layout"));
      expect(withCopy.nodeCount).toBeGreaterThan(100);
      expect(columnsOnly).toEqual(withCopy);
      // Every histogram slot taken while growing is given back.
      expect(grower.slotsInUse()).toBe(0);
    }
  });
});
