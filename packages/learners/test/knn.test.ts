import { allRows, createRng } from "@nightshift/core";
import { describe, expect, it } from "vitest";
import { FitError } from "../src/learner.js";
import { ParamError } from "../src/params.js";
import { knnLearner, nearestNeighbours, parseFamilyParams, screeningMargin } from "../src/index.js";
import { averagePrecision, categorical, classView, column, numeric, valueView } from "./linear-knn-fixtures.js";

const defaults = knnLearner.params.parse({});
const rng = createRng("knn-test");
const fit = (view: Parameters<typeof knnLearner.fit>[0], params: Partial<typeof defaults> = {}) => knnLearner.fit(view, { ...defaults, ...params }, rng);

/** The k nearest by a plain double loop: sort all rows by (squared distance, row). */
function plainNeighbours(train: Float64Array, n: number, query: Float64Array, q: number, p: number, k: number): Array<[number, number]> {
  const all: Array<[number, number]> = [];
  for (let r = 0; r < n; r++) {
    let s = 0;
    for (let j = 0; j < p; j++) s += (query[q * p + j] - train[r * p + j]) ** 2;
    all.push([s, r]);
  }
  all.sort((a, b) => a[0] - b[0] || a[1] - b[1]);
  return all.slice(0, k);
}

function randomMatrix(rows: number, p: number, seed: string, draw: (rng: ReturnType<typeof createRng>) => number): Float64Array {
  const r = createRng("matrix", seed);
  return Float64Array.from({ length: rows * p }, () => draw(r));
}

describe("exact nearest-neighbour search", () => {
  it("finds the same neighbours as a plain double loop, ties broken by the lower training row", () => {
    // Small integer coordinates make every squared distance an exact integer: many exact ties.
    for (const [n, m, p, k] of [
      [300, 37, 3, 5],
      [1000, 20, 7, 15],
      [57, 9, 2, 57],
      [40, 5, 5, 100],
    ]) {
      const train = randomMatrix(n, p, `train-${n}`, (r) => r.int(4));
      const queries = randomMatrix(m, p, `queries-${n}`, (r) => r.int(4));
      const found = nearestNeighbours(train, n, queries, m, p, k);
      expect(found.k).toBe(Math.min(k, n));
      for (let q = 0; q < m; q++) {
        const expected = plainNeighbours(train, n, queries, q, p, found.k);
        expect(Array.from(found.rows.subarray(q * found.k, (q + 1) * found.k))).toEqual(expected.map(([, r]) => r));
        expect(Array.from(found.squaredDistances.subarray(q * found.k, (q + 1) * found.k))).toEqual(expected.map(([d]) => d));
      }
    }
  });

  it("agrees with the plain loop on real-valued data, including far-off and huge queries", () => {
    const n = 2000;
    const p = 13;
    const train = randomMatrix(n, p, "real", (r) => r.normal());
    const queries = randomMatrix(6, p, "real-q", (r) => r.normal());
    // A shifted query (large norms stress the single-precision screen's margin) and a huge one (beyond single precision).
    for (let j = 0; j < p; j++) {
      queries[4 * p + j] += 1e4;
      queries[5 * p + j] = 1e20 * (j + 1);
    }
    const found = nearestNeighbours(train, n, queries, 6, p, 25);
    for (let q = 0; q < 6; q++) {
      const expected = plainNeighbours(train, n, queries, q, p, 25);
      expect(Array.from(found.rows.subarray(q * 25, (q + 1) * 25))).toEqual(expected.map(([, r]) => r));
      for (let j = 0; j < 25; j++) expect(found.squaredDistances[q * 25 + j]).toBeCloseTo(expected[j][0], 8 - Math.log10(Math.max(1, expected[j][0])));
    }
  });

  it("keeps the screening margin small next to the distances it separates", () => {
    // 30 features: the single-precision screen may admit pairs within ~6e-6 relative of the threshold.
    expect(screeningMargin(30)).toBeLessThan(1e-5);
    expect(screeningMargin(30)).toBeGreaterThan(30 * 2 ** -24);
  });
});

describe("knn family", () => {
  it("ranks the held-out rows of a separable set perfectly (average precision 1)", () => {
    // Two squares of side 2 centred at (−3, −3) and (3, 3): any two rows of one class are at most
    // 2√2 apart, rows of different classes at least 4√2, and standardising scales both axes alike.
    const draw = createRng("knn-separable");
    const square = (centre: number, n: number) => Array.from({ length: n }, () => [centre - 1 + 2 * draw.next(), centre - 1 + 2 * draw.next()]);
    const train = [...square(-3, 40), ...square(3, 40)];
    const test = [...square(-3, 25), ...square(3, 25)];
    const columnsOf = (points: number[][]) => [numeric("x0", points.map((p) => p[0])), numeric("x1", points.map((p) => p[1]))];
    const model = fit(classView(columnsOf(train), ["a", "b"], train.map((_, i) => (i < 40 ? 0 : 1))));
    const p = knnLearner.predict(model, { columns: columnsOf(test), rows: allRows(test.length) });
    expect(averagePrecision(test.map((_, i) => i >= 25), column(p, 2, 1))).toBeCloseTo(1, 12);
  });

  it("predicts the share of each class among the k nearest rows", () => {
    const x = numeric("x", [0, 1, 2, 3, 10, 11, 12]);
    const model = fit(classView([x], ["a", "b", "c"], [0, 0, 1, 1, 2, 2, 2]), { k: 3 });
    const p = knnLearner.predict(model, { columns: [numeric("x", [0.4, 11])], rows: allRows(2) });
    // Nearest to 0.4: rows 0, 1, 2 (classes a, a, b); to 11: rows 5, 4, 6 (all c).
    expect(Array.from(p)).toEqual([2 / 3, 1 / 3, 0, 0, 0, 1]);
  });

  it("weights neighbours by 1/distance, and a neighbour at distance 0 takes all the weight", () => {
    const x = numeric("x", [0, 1, 3, 4]);
    const model = fit(classView([x], ["a", "b"], [0, 1, 1, 0]), { k: 3, weights: "distance" });
    const std = Math.sqrt(2.5); // population std of 0, 1, 3, 4
    const p = knnLearner.predict(model, { columns: [numeric("x", [0.5, 1])], rows: allRows(2) });
    // Query 0.5: rows 0 and 1 at 0.5/std, row 2 at 2.5/std: weights std/0.5, std/0.5, std/2.5.
    const [wa, wb] = [std / 0.5, std / 0.5 + std / 2.5];
    expect(p[0]).toBeCloseTo(wa / (wa + wb), 12);
    expect(p[1]).toBeCloseTo(wb / (wa + wb), 12);
    // Query 1 sits on row 1 (class b): it alone decides.
    expect([p[2], p[3]]).toEqual([0, 1]);
  });

  it("predicts the (weighted) mean target on regression tasks", () => {
    const x = numeric("x", [0, 1, 2, 10]);
    const uniform = fit(valueView([x], [1, 2, 4, 100]), { k: 2 });
    expect(Array.from(knnLearner.predict(uniform, { columns: [numeric("x", [0.2])], rows: allRows(1) }))).toEqual([1.5]);
    const weighted = fit(valueView([x], [1, 2, 4, 100]), { k: 2, weights: "distance" });
    const [p] = knnLearner.predict(weighted, { columns: [numeric("x", [0.2])], rows: allRows(1) });
    expect(p).toBeCloseTo((1 / 0.2 + 2 / 0.8) / (1 / 0.2 + 1 / 0.8), 12);
  });

  it("measures a category mismatch like a standardised difference: one-hot columns, unseen categories all zeros", () => {
    const colour = categorical("colour", ["red", "blue", "green"], [0, 0, 1, 1, 0, 2]);
    const size = numeric("size", [0, 10, 4, 6, 5, 5]);
    const view = { ...classView([colour, size], ["a", "b"], [0, 0, 1, 1, 0, 0]), rows: allRows(4) };
    const model = fit(view, { k: 4, weights: "distance" });
    expect(model.encoding.names).toEqual(["colour=red", "colour=blue", "size"]);
    // Size: mean 5, population std √13. Query (red, 5) is 25/13 from both red rows and
    // 2 + 1/13 from both blue rows: a category mismatch adds exactly 2 to the squared distance.
    const [pa] = knnLearner.predict(model, { columns: [colour, size], rows: Uint32Array.of(4) });
    const [near, far] = [2 / Math.sqrt(25 / 13), 2 / Math.sqrt(2 + 1 / 13)];
    expect(pa).toBeCloseTo(near / (near + far), 12);
    // Query (green, 5): green was never seen, so it is 1 from every training category.
    const [ga] = knnLearner.predict(model, { columns: [colour, size], rows: Uint32Array.of(5) });
    const [red, blue] = [2 / Math.sqrt(1 + 25 / 13), 2 / Math.sqrt(1 + 1 / 13)];
    expect(ga).toBeCloseTo(red / (red + blue), 12);
  });

  it("fits its scaling on the training rows only", () => {
    const values = [1, 2, 3, 4, 5, 6, 1e9];
    const model = fit(classView([numeric("x", values)], ["a", "b"], [0, 0, 0, 1, 1, 1, 1], allRows(6)), { k: 1 });
    expect(model.encoding.columns[0]).toMatchObject({ mean: 3.5 });
    // The huge row is far beyond row 5 on the training scale, so its nearest neighbour is row 5 (class b).
    expect(Array.from(knnLearner.predict(model, { columns: [numeric("x", values)], rows: Uint32Array.of(6) }))).toEqual([0, 1]);
  });

  it("uses every training row when k exceeds them", () => {
    const model = fit(classView([numeric("x", [0, 1, 2])], ["a", "b"], [0, 1, 1]), { k: 50 });
    expect(Array.from(knnLearner.predict(model, { columns: [numeric("x", [0])], rows: allRows(1) }))).toEqual([1 / 3, 2 / 3]);
  });

  it("refuses to fit a single class or rows without a usable feature", () => {
    expect(() => fit(classView([numeric("x", [1, 2, 3])], ["a", "b"], [0, 0, 0]))).toThrow(FitError);
    expect(() => fit(classView([numeric("x", [1, 1, 1])], ["a", "b"], [0, 1, 0]))).toThrow(/no usable feature/);
  });

  for (const [task, view] of [
    ["classification", classView([numeric("x", [0.5, 1.5, 2.25, 7, 9]), numeric("z", [3, 1, 4, 1, 5])], ["a", "b", "c"], [0, 1, 2, 1, 0])],
    ["regression", valueView([numeric("x", [0.5, 1.5, 2.25, 7, 9])], [0.1, 0.2, 0.3, 0.4, 0.5])],
  ] as const) {
    it(`predicts bit for bit the same after a JSON round trip (${task})`, () => {
      const model = fit(view, { k: 3, weights: "distance" });
      const json = JSON.parse(JSON.stringify(knnLearner.toJSON(model)));
      const restored = knnLearner.fromJSON(json);
      const rows = { columns: view.columns, rows: allRows(5) };
      const before = knnLearner.predict(model, rows);
      const after = knnLearner.predict(restored, rows);
      expect(Buffer.from(after.buffer).equals(Buffer.from(before.buffer))).toBe(true);
    });
  }

  it("rejects a model whose training matrix does not match its shape", () => {
    const model = fit(classView([numeric("x", [0, 1, 2])], ["a", "b"], [0, 1, 1]));
    expect(() => knnLearner.fromJSON({ ...knnLearner.toJSON(model), rows: 4 })).toThrow(/knn model\.train/);
  });

  it("validates parameters with the family, parameter and range", () => {
    expect(parseFamilyParams("knn", knnLearner.params, {})).toEqual({ k: 15, weights: "uniform", metric: "euclidean", missing_indicators: true });
    const message = (input: unknown) => {
      try {
        parseFamilyParams("knn", knnLearner.params, input);
        return "accepted";
      } catch (error) {
        expect(error).toBeInstanceOf(ParamError);
        return (error as Error).message;
      }
    };
    expect(message({ k: 0 })).toBe("knn.k: must be >= 1 (got 0)");
    expect(message({ k: 1001 })).toBe("knn.k: must be <= 1000 (got 1001)");
    expect(message({ metric: "cosine" })).toBe('knn.metric: must be one of "euclidean" (got "cosine")');
  });
});
