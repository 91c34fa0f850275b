import type { Target } from "../frame.js";
import type { Task } from "../task.js";
import type { MetricName } from "./registry.js";

/** Below this share of positives, a binary task is a rare-event problem. */
export const RARE_POSITIVE_SHARE = 0.2;

/**
 * The metric a plan ranks by when it names none: average precision for a rare positive
 * class (accuracy would reward predicting "never"; METHODS.md §9), ROC AUC for balanced
 * binary tasks, log loss for multiclass, RMSE for regression.
 */
export function defaultMetricFor(task: Task, target: Target): { name: MetricName; reason: string } {
  if (task === "regression") return { name: "rmse", reason: "root mean squared error of the predicted number" };
  if (task === "multiclass") return { name: "log_loss", reason: "rewards well-calibrated class probabilities; accuracy is reported too" };
  let positives = 0;
  if (target.kind === "classes") for (let i = 0; i < target.codes.length; i++) if (target.codes[i] === 1) positives++;
  const share = target.kind === "classes" && target.codes.length > 0 ? positives / target.codes.length : 0.5;
  if (share < RARE_POSITIVE_SHARE)
    return { name: "average_precision", reason: `rare positive class (${(share * 100).toFixed(1)}%): accuracy would reward predicting 'never'` };
  return { name: "roc_auc", reason: "classes balanced enough: ranking quality over all thresholds" };
}
