import { allRows } from "@nightshift/core";
import { describe, expect, it } from "vitest";
import { designMatrix, fitDesign } from "../src/preprocess/design-matrix.js";
import { categorical, numeric } from "./linear-knn-fixtures.js";

describe("design matrix", () => {
  it("standardises with the population mean and standard deviation of the training rows", () => {
    const view = { columns: [numeric("x", [1, 2, 3, 4, 100])], rows: Uint32Array.of(0, 1, 2, 3) };
    const encoding = fitDesign(view, { missingIndicators: true });
    const std = Math.sqrt(1.25); // population std of 1, 2, 3, 4
    expect(encoding.columns[0]).toMatchObject({ mean: 2.5, std });
    const x = designMatrix(encoding, { columns: view.columns, rows: allRows(5) });
    expect(Array.from(x)).toEqual([1, 2, 3, 4, 100].map((v) => (v - 2.5) / std));
  });

  it("imputes a missing number with the training mean and flags it in an indicator column", () => {
    const columns = [numeric("x", [1, NaN, 3, Infinity])];
    const encoding = fitDesign({ columns, rows: Uint32Array.of(0, 1, 2) }, { missingIndicators: true });
    expect(encoding.names).toEqual(["x", "x missing"]);
    const x = designMatrix(encoding, { columns, rows: allRows(4) });
    expect(Array.from(x)).toEqual([-1, 0, 0, 1, 1, 0, 0, 1]);
    const without = fitDesign({ columns, rows: Uint32Array.of(0, 1, 2) }, { missingIndicators: false });
    expect(without.names).toEqual(["x"]);
  });

  it("adds no indicator when the training rows had no missing value", () => {
    const columns = [numeric("x", [1, 2, 3, NaN])];
    const encoding = fitDesign({ columns, rows: Uint32Array.of(0, 1, 2) }, { missingIndicators: true });
    expect(encoding.names).toEqual(["x"]);
    expect(designMatrix(encoding, { columns, rows: Uint32Array.of(3) })[0]).toBe(0);
  });

  it("one-hot encodes the categories seen in training; unseen and missing categories are all zeros", () => {
    const site = categorical("site", ["north", "south", "east"], [0, 1, 0, 2, -1]);
    const encoding = fitDesign({ columns: [site], rows: Uint32Array.of(0, 1, 2) }, { missingIndicators: true });
    expect(encoding.names).toEqual(["site=north", "site=south"]);
    const x = designMatrix(encoding, { columns: [site], rows: allRows(5) });
    expect(Array.from(x)).toEqual([1, 0, 0, 1, 1, 0, 0, 0, 0, 0]);
  });

  it("matches categories by their text, not their code, in another frame", () => {
    const training = categorical("site", ["north", "south"], [0, 1, 1]);
    const encoding = fitDesign({ columns: [training], rows: allRows(3) }, { missingIndicators: true });
    const other = categorical("site", ["south", "west", "north"], [0, 1, 2]);
    expect(Array.from(designMatrix(encoding, { columns: [other], rows: allRows(3) }))).toEqual([0, 1, 0, 0, 1, 0]);
  });

  it("drops columns that are constant over the training rows", () => {
    const columns = [numeric("flat", [5, 5, 5, 9]), categorical("one", ["a", "b"], [0, 0, 0, 1]), numeric("x", [1, 2, 3, 4])];
    const encoding = fitDesign({ columns, rows: Uint32Array.of(0, 1, 2) }, { missingIndicators: true });
    expect(encoding.names).toEqual(["x"]);
  });

  it("refuses rows whose columns differ from the training columns", () => {
    const encoding = fitDesign({ columns: [numeric("x", [1, 2])], rows: allRows(2) }, { missingIndicators: true });
    expect(() => designMatrix(encoding, { columns: [numeric("z", [1, 2])], rows: allRows(2) })).toThrow(/expected feature column "x"/);
  });
});
