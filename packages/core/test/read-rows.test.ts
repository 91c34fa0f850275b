import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { parseCsvDataset } from "../src/csv/read-csv.js";
import { parseCsvRows, readCsvRows } from "../src/csv/read-rows.js";
import { datasetSchema } from "../src/dataset/dataset.js";
import { InputError } from "../src/errors.js";
import type { CategoricalColumn, NumericColumn } from "../src/frame.js";
import { MISSING_CODE } from "../src/frame.js";

const scratch = mkdtempSync(join(tmpdir(), "nightshift-rows-"));
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

const training = parseCsvDataset("size,colour,fresh,y\n1.5,red,yes,0\n2,blue,no,1\n3,red,yes,1\n", "train.csv", { target: "y" });
const schema = datasetSchema(training);

describe("reading rows for prediction", () => {
  it("describes the training columns", () => {
    expect(schema).toEqual([
      { name: "size", kind: "numeric" },
      { name: "colour", kind: "categorical", vocabulary: ["red", "blue"] },
      { name: "fresh", kind: "boolean" },
    ]);
  });

  it("codes new rows with the training vocabulary, in schema order, counting unseen categories", async () => {
    const path = join(scratch, "new.csv");
    writeFileSync(path, "id;fresh;colour;size\n7;no;blue;4\n8;YES;green;NA\n9;;red;0.5\n10;no;green;1\n");
    const rows = await readCsvRows(path, schema);
    expect(rows.rowCount).toBe(4);
    expect(rows.columns.map((c) => c.name)).toEqual(["size", "colour", "fresh"]);
    expect(Array.from((rows.columns[0] as NumericColumn).values)).toEqual([4, NaN, 0.5, 1]);
    const colour = rows.columns[1] as CategoricalColumn;
    expect(Array.from(colour.codes)).toEqual([1, MISSING_CODE, 0, MISSING_CODE]);
    expect(colour.vocabulary).toEqual(["red", "blue"]);
    expect(Array.from((rows.columns[2] as NumericColumn).values)).toEqual([0, 1, NaN, 0]);
    expect(rows.unseen).toEqual({ colour: 2 });
  });

  it("names a column the model needs that the file lacks", () => {
    expect(() => parseCsvRows("size,fresh\n1,yes\n", "new.csv", schema)).toThrow(
      new InputError("new.csv:1", 'the model needs column "colour", missing from the file; its columns are "size", "fresh"'),
    );
  });

  it("names the line and column of a value that does not read as in training", () => {
    expect(() => parseCsvRows("size,colour,fresh\n1,red,yes\nbig,red,no\n", "new.csv", schema)).toThrow(
      /new\.csv:3: column "size": expected a number as in training, found "big"/,
    );
  });
});
