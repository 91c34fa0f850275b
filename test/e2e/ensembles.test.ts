import { readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { type ExportedEnsemble, loadEnsemble } from "@nightshift/aggregator";
import { averagePrecision, unpackDataset } from "@nightshift/core";
import { RunStore } from "@nightshift/store";
import Papa from "papaparse";
import { stringify } from "csv-stringify/sync";
import { beforeAll, describe, expect, it } from "vitest";
import { nightshift, SMALL_FAMILIES, tempDir, writePlan, writeSmallTurbines } from "./helpers.js";

function readCsv(text: string): Row[] {
  return Papa.parse<Row>(text, { header: true, skipEmptyLines: true }).data;
}

const PLAN = `name: ensembles
seed: 7
data: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id], holdout: 0.2 }
metric: average_precision
folds: { k: 3 }
budget: { trials: 8 }
ensemble: { selection: { rounds: 20, candidates: 8 }, stacking: { top: 5 }, voting: { top: 4 } }
${SMALL_FAMILIES}`;

type Row = Record<string, string>;

interface Board {
  ensembles: Array<{ kind: string; final?: boolean; members: Array<{ trial: number; weight: number }> }>;
  holdout: { opened_at: string; final: string; rows: number; scores: Array<{ name: string; score: number | null }> } | null;
  importance: { features: Array<{ name: string }> } | null;
}

function exportedOf(runDir: string): ExportedEnsemble {
  return JSON.parse(readFileSync(join(runDir, "ensemble.json"), "utf8")) as ExportedEnsemble;
}

function withoutCreation({ created_at: _c, ...rest }: ExportedEnsemble): unknown {
  return rest;
}

function writeRows(path: string, rows: Row[], columns: string[]): void {
  writeFileSync(path, stringify(rows, { header: true, columns }));
}

let dir: string;
let one: string;
let boardOne: Board;
let boardTwo: Board;
let csvRows: Row[];
let featureColumns: string[];

beforeAll(() => {
  dir = tempDir("ensembles");
  writeSmallTurbines(dir);
  const planPath = writePlan(dir, PLAN);
  one = join(dir, "one");
  const first = nightshift(["run", planPath, "--run-dir", one, "--workers", "1", "--json"], dir);
  expect(first.stderr).toBe("");
  expect(first.code).toBe(0);
  boardOne = JSON.parse(first.stdout) as Board;
  const second = nightshift(["run", planPath, "--run-dir", join(dir, "two"), "--workers", "2", "--json"], dir);
  expect(second.code).toBe(0);
  boardTwo = JSON.parse(second.stdout) as Board;
  csvRows = readCsv(readFileSync(join(dir, "turbines.csv"), "utf8"));
  featureColumns = Object.keys(csvRows[0]).filter((c) => c !== "failed_within_30d");
});

describe("ensembles, the hold-out and the exported predictor", () => {
  it("ends a run with three ensembles, the hold-out opened once, importance and ensemble.json", () => {
    expect(boardOne.ensembles.map((e) => e.kind).sort()).toEqual(["selection", "stacking", "voting"]);
    expect(boardOne.ensembles.filter((e) => e.final).length).toBeLessThanOrEqual(1);
    const holdout = boardOne.holdout;
    if (!holdout) throw new Error("the hold-out was not opened");
    expect(holdout.scores.map((s) => s.name)).toEqual([expect.stringMatching(/^best single trial \d+$/), "voting", "selection", "stacking"]);
    expect(holdout.rows).toBe(240);
    expect(holdout.scores.every((s) => s.score !== null && s.score >= 0 && s.score <= 1)).toBe(true);
    expect(boardOne.importance?.features.length).toBe(featureColumns.length - 1);
    const exported = exportedOf(one);
    expect(exported.format).toBe("nightshift-ensemble");
    expect(exported.target).toEqual({ name: "failed_within_30d", labels: ["no", "yes"] });
    expect(exported.columns.map((c) => c.name)).toEqual(featureColumns.filter((c) => c !== "turbine_id"));
    expect(exported.estimates.holdout).toBe(holdout.scores.find((s) => s.name === holdout.final)?.score);
  });

  it("gives the same ensembles, hold-out scores and exported predictor on 1 and 2 workers", () => {
    expect(boardTwo.ensembles).toEqual(boardOne.ensembles);
    expect(boardTwo.holdout?.scores).toEqual(boardOne.holdout?.scores);
    expect(boardTwo.importance).toEqual(boardOne.importance);
    expect(withoutCreation(exportedOf(join(dir, "two")))).toEqual(withoutCreation(exportedOf(one)));
  });

  it("never reopens the hold-out: running the finished run again changes nothing", () => {
    const before = readFileSync(join(one, "ensemble.json"));
    const again = nightshift(["run", join(dir, "e2e.plan.yaml"), "--run-dir", one, "--json"], dir);
    expect(again.code).toBe(0);
    expect(JSON.parse(again.stdout).holdout).toEqual(boardOne.holdout);
    expect(readFileSync(join(one, "ensemble.json")).equals(before)).toBe(true);
    const store = RunStore.open(one, { readonly: true });
    try {
      expect(store.events(0, 100_000).filter((e) => e.kind === "holdout_opened")).toHaveLength(1);
    } finally {
      store.close();
    }
  });

  it("predicts new rows with exactly the probabilities the final step scored on the hold-out", () => {
    const store = RunStore.open(one, { readonly: true });
    const holdoutRows = JSON.parse(store.getMeta("holdout_rows") ?? "[]") as number[];
    store.close();
    const rows = holdoutRows.map((i) => csvRows[i]);
    writeRows(join(dir, "new.csv"), rows, featureColumns);
    const r = nightshift(["predict", one, "new.csv", "-o", "out.csv"], dir);
    expect(r.code).toBe(0);
    expect(r.stderr).toMatch(/wrote 240 predictions to out\.csv/);
    const out = readCsv(readFileSync(join(dir, "out.csv"), "utf8"));
    expect(Object.keys(out[0])).toEqual(["probability_yes", "label"]);
    const probabilities = Float64Array.from(out, (o) => Number(o.probability_yes));

    // What the final step scored: the exported predictor on the sealed rows' pack.
    const exported = exportedOf(one);
    const sealed = unpackDataset(readFileSync(join(one, "holdout.pack")));
    const scored = loadEnsemble(exported).predict(sealed.features);
    for (let i = 0; i < probabilities.length; i++) expect(Math.abs(probabilities[i] - scored[2 * i + 1])).toBeLessThan(1e-12);
    const positive = Uint8Array.from(rows, (row) => (row.failed_within_30d === "yes" ? 1 : 0));
    const final = boardOne.holdout?.scores.find((s) => s.name === boardOne.holdout?.final)?.score ?? Number.NaN;
    expect(Math.abs(averagePrecision(positive, probabilities) - final)).toBeLessThan(1e-12);
    const threshold = exported.threshold ?? 0.5;
    expect(out.every((o) => o.label === (Number(o.probability_yes) >= threshold ? "yes" : "no"))).toBe(true);
  });

  it("counts unseen categories in a warning and predicts them as missing", () => {
    const rows = csvRows.slice(0, 20).map((row, i) => (i < 3 ? { ...row, model: "prototype-9mw" } : row));
    writeRows(join(dir, "unseen.csv"), rows, featureColumns);
    const r = nightshift(["predict", one, "unseen.csv", "--threshold", "0.3"], dir);
    expect(r.code).toBe(0);
    expect(r.stderr).toMatch(/column "model": 3 values were categories not seen in training/);
    const out = readCsv(r.stdout);
    expect(out).toHaveLength(20);
    expect(out.every((o) => o.label === (Number(o.probability_yes) >= 0.3 ? "yes" : "no"))).toBe(true);
  });

  it("refuses a missing column, an empty file, a wrong type and a bad threshold with exit code 2 and one message", () => {
    writeRows(join(dir, "missing.csv"), csvRows.slice(0, 5), featureColumns.filter((c) => c !== "vibration_kurtosis"));
    writeFileSync(join(dir, "empty.csv"), "");
    writeFileSync(join(dir, "header.csv"), `${featureColumns.join(",")}\n`);
    writeRows(join(dir, "text.csv"), csvRows.slice(0, 5).map((row, i) => (i === 2 ? { ...row, vibration_kurtosis: "high" } : row)), featureColumns);
    for (const [args, message] of [
      [["predict", one, "missing.csv"], /vibration_kurtosis/],
      [["predict", one, "empty.csv"], /empty/],
      [["predict", one, "header.csv"], /no rows to predict/],
      [["predict", one, "text.csv"], /text\.csv:4: column "vibration_kurtosis".*expected a number/],
      [["predict", one, "header.csv", "--threshold", "2"], /--threshold: must be a probability/],
      [["predict", dir, "header.csv"], /no ensemble\.json/],
    ] as const) {
      const r = nightshift([...args], dir);
      expect(r.code, args.join(" ")).toBe(2);
      expect(r.stderr).toMatch(message);
      expect(r.stderr.trim().split("\n")).toHaveLength(1);
    }
  });
});
