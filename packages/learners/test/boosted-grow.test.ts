import { allRows, createRng } from "@nightshift/core";
import { binCount, binRows, fitBinMapper, MISSING_BIN } from "../src/binning/bin-mapper.js";
import { binTrainingRows } from "../src/boosted/bin-search.js";
import { describe, expect, it } from "vitest";
import { type GrowingData, TreeGrower } from "../src/boosted/grow-tree.js";
import { buildHistogram, histogramLayout, rowMajorBins, subtractHistogram } from "../src/boosted/histogram.js";

/** Random local bins (missing = value bin count) for n rows and the given bins per feature. */
function randomData(n: number, valueBins: number[], seed: number): GrowingData & { grad: Float64Array; hess: Float64Array } {
  const rng = createRng("grow", seed);
  const layout = histogramLayout(Uint16Array.from(valueBins));
  const width = valueBins.length;
  const columnBins = valueBins.map(() => new Uint8Array(n));
  const grad = new Float64Array(n);
  const hess = new Float64Array(n);
  for (let r = 0; r < n; r++) {
    for (let f = 0; f < width; f++) {
      // One row in ten is missing; bin 0 of feature 0 carries most of the signal.
      const b = rng.next() < 0.1 ? valueBins[f] : rng.int(valueBins[f]);
      columnBins[f][r] = b;
    }
    grad[r] = (columnBins[0][r] < valueBins[0] / 2 ? -1 : 1) + 0.5 * rng.normal();
    hess[r] = 0.1 + rng.next();
  }
  return { columnBins, rowBins: rowMajorBins(columnBins, n), layout, categorical: new Uint8Array(width), rowCount: n, grad, hess };
}

describe("branch-free binning", () => {
  it("gives exactly the shared mapper's bins, with missing values after the value bins", () => {
    const rng = createRng("bins");
    const n = 3000;
    const specials = [NaN, Infinity, -Infinity, 0, -0];
    const wide = Float64Array.from({ length: n }, () => (rng.next() < 0.05 ? specials[rng.int(5)] : rng.normal() * 1e3));
    const few = Float32Array.from({ length: n }, () => (rng.next() < 0.1 ? NaN : rng.int(7)));
    const codes = Int32Array.from({ length: n }, () => (rng.next() < 0.1 ? -1 : rng.int(400)));
    const columns = [
      { name: "wide", kind: "numeric" as const, values: wide },
      { name: "few", kind: "numeric" as const, values: few },
      { name: "site", kind: "categorical" as const, codes, vocabulary: Array.from({ length: 401 }, (_, i) => `s${i}`) },
    ];
    const fitRows = Uint32Array.from({ length: 2000 }, (_, i) => i);
    for (const maxBins of [255, 16, 2]) {
      const mapper = fitBinMapper({ columns, rows: fitRows }, maxBins);
      const view = { columns, rows: allRows(n) };
      const counts = Uint16Array.from(mapper.features, binCount);
      const ours = binTrainingRows(mapper, view, counts);
      const shared = binRows(mapper, view);
      for (let f = 0; f < 3; f++) {
        const expected = Array.from(shared.bins[f], (b) => (b === MISSING_BIN ? counts[f] : b));
        expect(Array.from(ours[f])).toEqual(expected);
      }
    }
  });
});

describe("gradient histograms", () => {
  it("give the sibling's histogram as parent minus child (histogram subtraction)", () => {
    const data = randomData(500, [7, 255, 2], 1);
    const layout = data.layout;
    const features = Int32Array.from([0, 1, 2]);
    const rows = Uint32Array.from({ length: 500 }, (_, i) => i);
    const hist = new Float64Array(3 * layout.length);
    buildHistogram(hist, 0, layout, data.rowBins, features, 3, rows, 0, 500, data.grad, data.hess, true, false);
    buildHistogram(hist, layout.length, layout, data.rowBins, features, 3, rows, 0, 180, data.grad, data.hess, true, false);
    buildHistogram(hist, 2 * layout.length, layout, data.rowBins, features, 3, rows, 180, 500, data.grad, data.hess, true, false);
    subtractHistogram(hist, 0, layout.length, layout, features, 3);
    for (let i = 0; i < layout.length; i++) expect(hist[i]).toBeCloseTo(hist[2 * layout.length + i], 9);
  });
});

describe("leaf-wise tree growth", () => {
  const limits = { maxLeaves: 24, maxDepth: Infinity, learningRate: 1, l2: 1, minLeaf: 5, minHessian: 1e-3, minGain: 0 };

  function grownTree(poolBytes?: number) {
    const data = randomData(2000, [16, 40, 255, 3], 2);
    const grower = new TreeGrower(data, limits, false, poolBytes);
    for (let i = 0; i < 2000; i++) grower.rows[i] = i;
    grower.grow(data.grad, data.hess, 2000, Int32Array.from([0, 1, 2, 3]), 4);
    return { grower, data };
  }

  it("grows the same tree when the histogram pool is too small to keep every waiting leaf's histogram", () => {
    const full = grownTree().grower;
    const tiny = grownTree(1).grower;
    expect(full.leafCount).toBe(24);
    expect(tiny.nodeCount).toBe(full.nodeCount);
    expect(tiny.nodeFeature).toEqual(full.nodeFeature);
    expect(tiny.nodeThreshold).toEqual(full.nodeThreshold);
    for (let n = 0; n < full.nodeCount; n++) expect(tiny.nodeValue[n]).toBeCloseTo(full.nodeValue[n], 9);
  });

  it("finds the same splits without row counts in its histograms when one row per leaf is enough", () => {
    // With h = 1 for every row, the squared-error path keeps counts (Σh) and the other does not.
    const data = randomData(2000, [16, 40, 255, 3], 4);
    const ones = new Float64Array(2000).fill(1);
    const trees = [true, false].map((constantHessian) => {
      const grower = new TreeGrower(data, { ...limits, minLeaf: 1 }, constantHessian);
      for (let i = 0; i < 2000; i++) grower.rows[i] = i;
      grower.grow(data.grad, ones, 2000, Int32Array.from([0, 1, 2, 3]), 4);
      return grower;
    });
    expect(trees[1].nodeCount).toBe(trees[0].nodeCount);
    expect(trees[1].nodeFeature).toEqual(trees[0].nodeFeature);
    expect(trees[1].nodeThreshold).toEqual(trees[0].nodeThreshold);
    expect(trees[1].nodeMissingLeft).toEqual(trees[0].nodeMissingLeft);
    expect(trees[1].nodeValue).toEqual(trees[0].nodeValue);
  });

  it("partitions rows so each leaf owns exactly the rows that walk to it", () => {
    const { grower } = grownTree();
    const seen = new Set<number>();
    for (let leaf = 0; leaf < grower.leafCount; leaf++) {
      expect(grower.leafEnd[leaf] - grower.leafStart[leaf]).toBeGreaterThanOrEqual(limits.minLeaf);
      for (let i = grower.leafStart[leaf]; i < grower.leafEnd[leaf]; i++) {
        const row = grower.rows[i];
        seen.add(row);
        expect(grower.leafOf(row)).toBe(grower.leafNode[leaf]);
      }
    }
    expect(seen.size).toBe(2000);
  });

  it("respects the depth limit", () => {
    const data = randomData(2000, [16, 40, 255, 3], 3);
    const grower = new TreeGrower(data, { ...limits, maxLeaves: 64, maxDepth: 3 }, false);
    for (let i = 0; i < 2000; i++) grower.rows[i] = i;
    grower.grow(data.grad, data.hess, 2000, Int32Array.from([0, 1, 2, 3]), 4);
    expect(grower.depth).toBe(3);
    expect(grower.leafCount).toBeLessThanOrEqual(8);
  });
});
