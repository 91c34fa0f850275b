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
