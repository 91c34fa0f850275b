import { allRows, ColumnSchemaSchema, type FeatureColumn, FamilyNameSchema, predictionWidth, TaskSchema } from "@nightshift/core";
import { learnerFor, type ModelJson } from "@nightshift/learners";
import { z } from "zod";
import { combinePredictions, toFullWidth, toStoredLayout } from "./combine-predictions.js";
import { EnsembleSpecSchema } from "./ensemble-spec.js";

export const EXPORT_FORMAT = "nightshift-ensemble";
export const EXPORT_VERSION = 1;

const EstimateSchema = z.strictObject({ mean: z.number().nullable(), std: z.number().nullable() });

/**
 * `ensemble.json`: everything needed to predict on new rows, with nothing else to read: the
 * columns the model reads (names, kinds, category lists, in the training order), the task and
 * its class labels, the ensemble (members' weights or the stacker) and every member's model
 * fitted on all training rows, as its family's JSON.
 */
export const ExportedEnsembleSchema = z
  .strictObject({
    format: z.literal(EXPORT_FORMAT),
    version: z.literal(EXPORT_VERSION),
    run: z.string(),
    created_at: z.string(),
    nightshift_version: z.string(),
    task: TaskSchema,
    target: z.strictObject({ name: z.string(), labels: z.array(z.string()).optional() }),
    metric: z.string(),
    columns: z.array(ColumnSchemaSchema).min(1),
    /** Binary tasks: rows with P(positive) ≥ threshold are labelled positive. */
    threshold: z.number().min(0).max(1).optional(),
    ensemble: EnsembleSpecSchema,
    models: z.array(
      z.strictObject({
        trial: z.number().int().nonnegative(),
        family: FamilyNameSchema,
        params: z.record(z.string(), z.unknown()),
        model: z.looseObject({ family: FamilyNameSchema }),
      }),
    ),
    estimates: z.strictObject({ out_of_fold: EstimateSchema, nested: EstimateSchema, holdout: z.number().nullable() }),
  })
  .superRefine((value, ctx) => {
    const trials = new Set(value.models.map((m) => m.trial));
    value.ensemble.members.forEach((member, i) => {
      if (!trials.has(member.trial)) ctx.addIssue({ code: "custom", path: ["ensemble", "members", i, "trial"], message: `no model for trial ${member.trial}` });
    });
    const labels = value.target.labels?.length ?? 0;
    if (value.task !== "regression" && labels < 2) ctx.addIssue({ code: "custom", path: ["target", "labels"], message: "a classification predictor needs its class labels" });
  });
export type ExportedEnsemble = z.infer<typeof ExportedEnsembleSchema>;

/** A predictor ready to use: members' models parsed once. */
export interface LoadedEnsemble {
  readonly exported: ExportedEnsemble;
  /** Full-width predictions (class probabilities per label, or values), row-major. */
  predict(columns: readonly FeatureColumn[]): Float64Array;
  /** Columns per predicted row: the number of classes, or 1. */
  readonly width: number;
}

export function loadEnsemble(exported: ExportedEnsemble): LoadedEnsemble {
  const classCount = exported.task === "regression" ? 1 : (exported.target.labels?.length ?? 0);
  const width = predictionWidth(exported.task, classCount);
  const storedWidth = exported.task === "multiclass" ? classCount : 1;
  const byTrial = new Map(exported.models.map((m) => [m.trial, m]));
  const members = exported.ensemble.members.map((member) => {
    const entry = byTrial.get(member.trial);
    if (!entry) throw new RangeError(`ensemble member trial ${member.trial} has no model`);
    const learner = learnerFor(entry.family);
    return { learner, model: learner.fromJSON(entry.model as ModelJson) };
  });
  return {
    exported,
    width,
    predict(columns) {
      checkColumns(exported, columns);
      const rowCount = rowsOf(columns);
      const view = { columns, rows: allRows(rowCount) };
      const stored = members.map(({ learner, model }) => toStoredLayout(exported.task, learner.predict(model, view), width));
      return toFullWidth(exported.task, combinePredictions(exported.ensemble, exported.task, storedWidth, stored, rowCount));
    },
  };
}

/**
 * The exported predictor's predictions for new rows, given as columns in the predictor's
 * column order (`readCsvRows` with `exported.columns` reads a CSV file that way): class
 * probabilities per label (binary: [P(first label), P(second label)]) or values, row-major.
 */
export function predictWithEnsemble(exported: ExportedEnsemble, columns: readonly FeatureColumn[]): Float64Array {
  return loadEnsemble(exported).predict(columns);
}

function checkColumns(exported: ExportedEnsemble, columns: readonly FeatureColumn[]): void {
  if (columns.length !== exported.columns.length) throw new RangeError(`the predictor reads ${exported.columns.length} columns, got ${columns.length}`);
  exported.columns.forEach((schema, i) => {
    const column = columns[i];
    const categorical = column.kind === "categorical";
    if (column.name !== schema.name || categorical !== (schema.kind === "categorical"))
      throw new RangeError(`column ${i + 1} should be ${schema.kind} '${schema.name}', got ${column.kind} '${column.name}'`);
  });
}

function rowsOf(columns: readonly FeatureColumn[]): number {
  const first = columns[0];
  const n = first.kind === "categorical" ? first.codes.length : first.values.length;
  for (const c of columns) if ((c.kind === "categorical" ? c.codes.length : c.values.length) !== n) throw new RangeError("columns differ in length");
  return n;
}
