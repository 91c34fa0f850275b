import { z } from "zod";

export const TaskSchema = z.enum(["binary", "multiclass", "regression"]);
/** What is predicted: a yes/no event, one of several classes, or a number. */
export type Task = z.infer<typeof TaskSchema>;

/**
 * Number of prediction columns a model returns per row for a task:
 * class probabilities (one per class, also for binary) or one value for regression.
 */
export function predictionWidth(task: Task, classCount: number): number {
  return task === "regression" ? 1 : classCount;
}

/**
 * Columns kept per row in stored out-of-fold predictions: P(positive class) alone for a
 * binary task (P(negative) = 1 − P(positive) adds nothing), every class probability for
 * multiclass, the value for regression.
 */
export function storedWidth(task: Task, classCount: number): number {
  return task === "multiclass" ? classCount : 1;
}

/** The stored columns of a row-major prediction matrix of width `predictionWidth`. */
export function toStoredPredictions(task: Task, predictions: Float64Array, width: number): Float32Array {
  if (task !== "binary") return Float32Array.from(predictions);
  const rows = predictions.length / width;
  const out = new Float32Array(rows);
  for (let i = 0; i < rows; i++) out[i] = predictions[i * width + 1];
  return out;
}
