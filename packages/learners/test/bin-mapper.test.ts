import { allRows, type CategoricalColumn, type NumericColumn } from "@nightshift/core";
import { describe, expect, it } from "vitest";
import { binRows, fitBinMapper, MISSING_BIN } from "../src/binning/bin-mapper.js";

const numeric = (name: string, values: number[]): NumericColumn => ({ name, kind: "numeric", values: Float64Array.from(values) });

describe("quantile binning", () => {
  it("gives one bin per distinct value when there are few, cutting half-way", () => {
    const column = numeric("x", [3, 1, 2, 2, NaN, 1]);
    const mapper = fitBinMapper({ columns: [column], rows: allRows(6) });
    const feature = mapper.features[0];
    expect(feature.kind === "numeric" && Array.from(feature.upperEdges)).toEqual([1.5, 2.5, Infinity]);
    const binned = binRows(mapper, { columns: [column], rows: allRows(6) });
    expect(Array.from(binned.bins[0])).toEqual([2, 0, 1, 1, MISSING_BIN, 0]);
  });

  it("marks a constant feature with a single bin so no split can use it", () => {
    const column = numeric("c", [5, 5, 5, 5]);
    const binned = binRows(fitBinMapper({ columns: [column], rows: allRows(4) }), { columns: [column], rows: allRows(4) });
    expect(binned.binCounts[0]).toBe(1);
  });

  it("caps the number of bins and keeps bins ordered by value", () => {
    const values = Array.from({ length: 10_000 }, (_, i) => (i * 7919) % 10_000);
    const column = numeric("x", values);
    const mapper = fitBinMapper({ columns: [column], rows: allRows(values.length) }, 16);
    const binned = binRows(mapper, { columns: [column], rows: allRows(values.length) });
    expect(binned.binCounts[0]).toBeLessThanOrEqual(16);
    for (let i = 0; i < values.length; i++)
      for (let j = 0; j < 50; j++) if (values[i] < values[j]) expect(binned.bins[0][i]).toBeLessThanOrEqual(binned.bins[0][j]);
  });

  it("fits categories on the training rows only: a category unseen in training lands in the missing bin", () => {
    const column: CategoricalColumn = { name: "site", kind: "categorical", codes: Int32Array.from([0, 1, 0, 2]), vocabulary: ["a", "b", "c"] };
    const mapper = fitBinMapper({ columns: [column], rows: Uint32Array.from([0, 1, 2]) });
    const binned = binRows(mapper, { columns: [column], rows: allRows(4) });
    expect(Array.from(binned.bins[0])).toEqual([0, 1, 0, MISSING_BIN]);
  });
});

describe("quantile binning edges", () => {
  /** The edges by definition, from a plain ascending sort (the mapper sorts by radix). */
  function expectedEdges(values: number[], maxBins: number): number[] {
    const sorted = values.filter((v) => !Number.isNaN(v)).sort((a, b) => a - b);
    const distinct = sorted.filter((v, i) => i === 0 || v !== sorted[i - 1]);
    const edges: number[] = [];
    if (distinct.length <= maxBins) {
      for (let i = 0; i + 1 < distinct.length; i++) edges.push((distinct[i] + distinct[i + 1]) / 2);
    } else {
      let previous = -Infinity;
      for (let b = 1; b < maxBins; b++) {
        const q = sorted[Math.floor((b * sorted.length) / maxBins)];
        if (q <= previous) continue;
        const next = sorted.find((v) => v > q);
        if (next === undefined) break;
        const edge = (q + next) / 2;
        if (edge > previous) edges.push(edge);
        previous = next;
      }
    }
    return [...edges, Infinity];
  }

  it("places edges at the quantiles of the sorted training values, negatives, ties and float32 values included", () => {
    let state = 12345;
    const next = () => (state = (state * 1103515245 + 12345) % 2 ** 31) / 2 ** 31;
    const cases: number[][] = [
      Array.from({ length: 5000 }, () => (next() - 0.5) * 1e6),
      Array.from({ length: 5000 }, () => Math.fround((next() - 0.7) * 3)),
      Array.from({ length: 5000 }, () => Math.round((next() - 0.5) * 40) / 4),
      Array.from({ length: 3000 }, (_, i) => (i % 7 === 0 ? NaN : i % 5 === 0 ? -Infinity : (next() - 0.5) * 1e-300)),
    ];
    for (const values of cases) {
      for (const maxBins of [255, 16]) {
        const mapper = fitBinMapper({ columns: [numeric("x", values)], rows: allRows(values.length) }, maxBins);
        const feature = mapper.features[0];
        expect(feature.kind === "numeric" && Array.from(feature.upperEdges)).toEqual(expectedEdges(values, maxBins));
      }
    }
  });
});
