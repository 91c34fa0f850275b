import type { Task } from "../task.js";
import { macroAveragePrecision } from "./average-precision.js";
import { brierScore } from "./brier.js";
import {
  accuracy,
  balancedAccuracy,
  confusionMatrixOfProbabilities,
  f1Score,
  matthewsCorrelation,
} from "./confusion.js";
import { logLoss } from "./log-loss.js";
import { checkValuePredictions } from "./prediction-shape.js";
import { meanAbsoluteError, r2Score, rootMeanSquaredError } from "./regression.js";
import { macroRocAucOneVsRest } from "./roc-auc.js";

export type MetricName =
  | "average_precision"
  | "roc_auc"
  | "log_loss"
  | "brier"
  | "accuracy"
  | "balanced_accuracy"
  | "f1"
  | "mcc"
  | "rmse"
  | "mae"
  | "r2";

export interface Metric {
  readonly name: MetricName;
  /** Whether a larger ("max") or a smaller ("min") value is better. */
  readonly direction: "max" | "min";
  /** The tasks the metric applies to. */
  readonly tasks: readonly Task[];
  /**
   * y: class index per row (Int32Array) for classification, values (Float64Array) for regression.
   * predictions: row-major, width = number of classes (probabilities; for binary width 2,
   * column 1 = positive class) or 1 for regression.
   *
   * Label metrics (accuracy, balanced accuracy, F1, MCC) turn probabilities into labels first:
   * binary → class 1 when P(class 1) ≥ 0.5; multiclass → the most probable class, lowest index
   * among equals. Ranking metrics reuse a module-wide scratch, so repeated calls on the same
   * row count allocate nothing proportional to the rows.
   */
  score(y: Int32Array | Float64Array, predictions: Float64Array, width: number): number;
}

const CLASSIFICATION: readonly Task[] = Object.freeze(["binary", "multiclass"] as const);
const REGRESSION: readonly Task[] = Object.freeze(["regression"] as const);

function classIndices(name: MetricName, y: Int32Array | Float64Array): Int32Array {
  if (!(y instanceof Int32Array)) {
    throw new TypeError(`metric ${name} needs class indices (Int32Array), got ${y.constructor.name}`);
  }
  return y;
}

function classificationMetric(
  name: MetricName,
  direction: "max" | "min",
  compute: (y: Int32Array, predictions: Float64Array, width: number) => number,
): Metric {
  return Object.freeze({
    name,
    direction,
    tasks: CLASSIFICATION,
    score: (y: Int32Array | Float64Array, predictions: Float64Array, width: number) =>
      compute(classIndices(name, y), predictions, width),
  });
}

function labelMetric(name: MetricName, ofMatrix: (matrix: Uint32Array) => number): Metric {
  return classificationMetric(name, "max", (y, predictions, width) =>
    ofMatrix(confusionMatrixOfProbabilities(y, predictions, width)),
  );
}

function regressionMetric(
  name: MetricName,
  direction: "max" | "min",
  compute: (y: ArrayLike<number>, predictions: Float64Array) => number,
): Metric {
  return Object.freeze({
    name,
    direction,
    tasks: REGRESSION,
    score: (y: Int32Array | Float64Array, predictions: Float64Array, width: number) => {
      checkValuePredictions(y, predictions, width);
      return compute(y, predictions);
    },
  });
}

export const METRICS: Readonly<Record<MetricName, Metric>> = Object.freeze({
  average_precision: classificationMetric("average_precision", "max", (y, p, w) => macroAveragePrecision(y, p, w)),
  roc_auc: classificationMetric("roc_auc", "max", (y, p, w) => macroRocAucOneVsRest(y, p, w)),
  log_loss: classificationMetric("log_loss", "min", logLoss),
  brier: classificationMetric("brier", "min", brierScore),
  accuracy: labelMetric("accuracy", accuracy),
  balanced_accuracy: labelMetric("balanced_accuracy", balancedAccuracy),
  f1: labelMetric("f1", f1Score),
  mcc: labelMetric("mcc", matthewsCorrelation),
  rmse: regressionMetric("rmse", "min", rootMeanSquaredError),
  mae: regressionMetric("mae", "min", meanAbsoluteError),
  r2: regressionMetric("r2", "max", r2Score),
});

export const METRIC_NAMES: readonly MetricName[] = Object.freeze(Object.keys(METRICS) as MetricName[]);

export function isMetricName(name: string): name is MetricName {
  return Object.prototype.hasOwnProperty.call(METRICS, name);
}

/** The metric called `name`; a RangeError listing the valid names for any other string. */
export function metricByName(name: string): Metric {
  if (!isMetricName(name)) {
    throw new RangeError(`unknown metric "${name}"; valid metrics: ${METRIC_NAMES.join(", ")}`);
  }
  return METRICS[name];
}

/**
 * Whether score `a` is strictly better than score `b` under the metric's direction.
 * A number beats NaN (an undefined score, e.g. ROC AUC of a one-class fold); NaN beats nothing.
 */
export function isBetter(metric: Metric, a: number, b: number): boolean {
  if (Number.isNaN(a)) return false;
  if (Number.isNaN(b)) return true;
  return metric.direction === "max" ? a > b : a < b;
}
