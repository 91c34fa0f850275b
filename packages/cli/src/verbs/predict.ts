import { existsSync, readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { type ExportedEnsemble, ExportedEnsembleSchema, predictWithEnsemble } from "@nightshift/aggregator";
import { ENSEMBLE_FILE } from "@nightshift/coordinator";
import { InputError, readCsvRows } from "@nightshift/core";
import { stringify } from "csv-stringify/sync";
import { parseVerbArgs } from "../args.js";
import type { Verb } from "../commands.js";

/** Reads and checks a run's exported predictor; any problem is a user-facing InputError. */
export function readExportedEnsemble(runDir: string): ExportedEnsemble {
  const file = join(runDir, ENSEMBLE_FILE);
  if (!existsSync(file))
    throw new InputError(runDir, `no ${ENSEMBLE_FILE} here: the run has no exported predictor (its search has not finished, or no trial finished)`);
  let raw: unknown;
  try {
    raw = JSON.parse(readFileSync(file, "utf8"));
  } catch (error) {
    throw new InputError(file, `not a readable JSON file (${(error as Error).message})`);
  }
  const parsed = ExportedEnsembleSchema.safeParse(raw);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    throw new InputError(`${file}: ${issue.path.map(String).join(".") || "(file)"}`, `not a nightshift predictor file: ${issue.message}`);
  }
  return parsed.data;
}

/** Output rows: probabilities (and the label at the threshold) or values, one per input row. */
export function predictionRecords(exported: ExportedEnsemble, predictions: Float64Array, threshold: number): { header: string[]; records: Array<Array<string | number>> } {
  const labels = exported.target.labels ?? [];
  if (exported.task === "regression") return { header: ["prediction"], records: Array.from(predictions, (v) => [v]) };
  const width = labels.length;
  const rows = predictions.length / width;
  const records: Array<Array<string | number>> = [];
  if (exported.task === "binary") {
    for (let i = 0; i < rows; i++) {
      const p = predictions[2 * i + 1];
      records.push([p, p >= threshold ? labels[1] : labels[0]]);
    }
    return { header: [`probability_${labels[1]}`, "label"], records };
  }
  for (let i = 0; i < rows; i++) {
    let best = 0;
    const record: Array<string | number> = [];
    for (let c = 0; c < width; c++) {
      const p = predictions[i * width + c];
      record.push(p);
      if (p > predictions[i * width + best]) best = c;
    }
    record.push(labels[best]);
    records.push(record);
  }
  return { header: [...labels.map((l) => `probability_${l}`), "label"], records };
}

export const predictVerb: Verb = {
  name: "predict",
  usage: "predict <run-dir> <rows.csv> [-o out.csv] [--threshold T]",
  summary: "predict new rows with a run's exported ensemble (ensemble.json)",
  async run(args) {
    const { values, positionals } = parseVerbArgs(
      "predict",
      args,
      { out: { type: "string", short: "o" }, threshold: { type: "string" } },
      { min: 2, max: 2, names: "a run folder and a CSV file: nightshift predict <run-dir> <rows.csv>" },
    );
    const [runDir, csvPath] = positionals;
    const exported = readExportedEnsemble(runDir);
    let threshold = exported.threshold ?? 0.5;
    if (values.threshold !== undefined) {
      if (exported.task !== "binary") throw new InputError("nightshift predict --threshold", `only a binary predictor has a threshold; this one is ${exported.task}`);
      const t = Number(values.threshold);
      if (!(t >= 0 && t <= 1) || values.threshold.trim() === "") throw new InputError("nightshift predict --threshold", `must be a probability between 0 and 1 (got '${values.threshold}')`);
      threshold = t;
    }
    const rows = await readCsvRows(csvPath, exported.columns);
    if (rows.rowCount === 0) throw new InputError(csvPath, "no rows to predict (the file has only a header)");
    for (const [column, count] of Object.entries(rows.unseen))
      if (count > 0)
        console.error(`nightshift: warning: column "${column}": ${count} value${count === 1 ? " was a category" : "s were categories"} not seen in training, predicted as missing`);
    const { header, records } = predictionRecords(exported, predictWithEnsemble(exported, rows.columns), threshold);
    const text = stringify(records, { header: true, columns: header });
    if (values.out) {
      writeFileSync(values.out, text);
      console.error(`nightshift: wrote ${rows.rowCount} predictions to ${values.out}`);
    } else process.stdout.write(text);
    return 0;
  },
};
