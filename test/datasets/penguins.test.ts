import { mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { fileURLToPath } from "node:url";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { readCsvDataset } from "../../packages/core/src/csv/read-csv.js";
import type { Dataset } from "../../packages/core/src/dataset/dataset.js";
import { MISSING_CODE, type FeatureColumn } from "../../packages/core/src/frame.js";

/**
 * Palmer penguins as shipped by the npm package vega-datasets 3.2.1 (data/penguins.json,
 * CC0 per its datapackage.json), written to a CSV file and ingested.
 *
 * What we found in that JSON: the four measurements are JSON null when missing (2 rows
 * each), and "Sex" is null in 10 rows and the string "." in 1 row. The palmerpenguins R
 * package counts 11 missing sex values, so "." is a missing value there; nightshift reads
 * it as one only when told (`missing: ["."]`).
 */
// The package's "exports" hide its data folder from resolution, so it is read by path.
const jsonPath = fileURLToPath(new URL("../../node_modules/vega-datasets/data/penguins.json", import.meta.url));
type Penguin = Record<string, string | number | null>;

function toCsv(records: Penguin[]): string {
  const names = Object.keys(records[0]);
  const field = (value: string | number | null): string => {
    if (value === null) return "";
    const text = String(value);
    return /[",\n]/.test(text) ? `"${text.replaceAll('"', '""')}"` : text;
  };
  return [names.map(field).join(","), ...records.map((record) => names.map((name) => field(record[name])).join(","))].join("\n") + "\n";
}

function missingCount(column: FeatureColumn): number {
  if (column.kind === "categorical") return column.codes.filter((code) => code === MISSING_CODE).length;
  return column.values.filter(Number.isNaN).length;
}

const scratch = mkdtempSync(join(tmpdir(), "nightshift-penguins-"));
const csvPath = join(scratch, "penguins.csv");
let dataset: Dataset;
let strict: Dataset;

beforeAll(async () => {
  writeFileSync(csvPath, toCsv(JSON.parse(readFileSync(jsonPath, "utf8")) as Penguin[]));
  dataset = await readCsvDataset(csvPath, { target: "Species", missing: ["."] });
  strict = await readCsvDataset(csvPath, { target: "Species" });
});
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

describe("Palmer penguins (vega-datasets 3.2.1)", () => {
  it("has 344 rows and three species: Adelie 152, Chinstrap 68, Gentoo 124", () => {
    // Published figures: palmerpenguins R package, count(penguins, species) (from memory).
    expect(dataset.rowCount).toBe(344);
    expect(dataset.droppedRows).toBe(0);
    expect(dataset.task).toBe("multiclass");
    if (dataset.target.kind !== "classes") throw new Error("species must be classes");
    const { codes, labels } = dataset.target;
    expect(labels).toEqual(["Adelie", "Chinstrap", "Gentoo"]);
    expect(labels.map((_, c) => codes.filter((code) => code === c).length)).toEqual([152, 68, 124]);
  });

  it("has the published missing counts: 2 per measurement, 11 for sex", () => {
    // Published figures: palmerpenguins R package, summary(penguins): NA's 2 for bill length,
    // bill depth, flipper length and body mass, 11 for sex (from memory; pandas' info() of the
    // same data shows 342 and 333 non-null values).
    const missing = Object.fromEntries(dataset.features.map((column) => [column.name, missingCount(column)]));
    expect(missing).toEqual({
      Island: 0,
      "Beak Length (mm)": 2,
      "Beak Depth (mm)": 2,
      "Flipper Length (mm)": 2,
      "Body Mass (g)": 2,
      Sex: 11,
    });
    for (const name of ["Beak Length (mm)", "Beak Depth (mm)", "Flipper Length (mm)", "Body Mass (g)"]) {
      expect(dataset.features.find((column) => column.name === name)?.kind).toBe("numeric");
    }
  });

  it("reads the '.' sex as a category of its own unless it is listed as missing", () => {
    const sex = strict.features.find((column) => column.name === "Sex");
    if (sex?.kind !== "categorical") throw new Error("Sex must be categorical");
    expect(missingCount(sex)).toBe(10);
    expect(sex.vocabulary).toContain(".");
    expect(sex.codes.filter((code) => sex.vocabulary[code] === ".").length).toBe(1);
  });
});
