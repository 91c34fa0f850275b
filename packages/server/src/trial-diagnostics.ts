import {
  accuracy,
  averagePrecision,
  calibrationBins,
  type CalibrationStrategy,
  confusionMatrix,
  expectedCalibrationError,
  meanAbsoluteError,
  precisionRecallCurve,
  r2Score,
  rocAuc,
  rocCurve,
  rootMeanSquaredError,
  type Task,
} from "@nightshift/core";
import type { TrialDiagnostics } from "./schemas.js";

/** The out-of-fold predictions of one trial, pooled over its folds, with the true targets of the same rows. */
export interface PooledPredictions {
  readonly task: Task;
  /** Class labels in class-index order (classification), empty for regression. */
  readonly labels: readonly string[];
  /** Class index per row (classification) or the value (regression). */
  readonly truth: Int32Array | Float64Array;
  /** Row-major, in the stored layout: P(class 1) for binary, every class for multiclass, the value for regression. */
  readonly predictions: Float32Array;
  readonly folds: readonly number[];
}

export interface DiagnosticsOptions {
  readonly threshold: number;
  readonly bins: number;
  readonly strategy: CalibrationStrategy;
  /** Class scored one-vs-rest; default class 1 for binary (the positive label), class 0 for multiclass. */
  readonly positive?: number;
  /** Most points kept per drawn curve. */
  readonly points: number;
}

/** A JSON-safe number: NaN and ±Infinity become null. */
export function finiteOrNull(value: number): number | null {
  return Number.isFinite(value) ? value : null;
}

function listOf(values: ArrayLike<number>): Array<number | null> {
  return Array.from(values, finiteOrNull);
}

/** Indices 0..length-1 thinned to at most `points`, evenly spaced, both ends kept. */
export function thinnedIndices(length: number, points: number): Uint32Array {
  if (length <= points) return Uint32Array.from({ length }, (_, i) => i);
  const out = new Uint32Array(points);
  for (let k = 0; k < points; k++) out[k] = Math.round((k * (length - 1)) / (points - 1));
  return out;
}

function thinned(values: ArrayLike<number>, keep: Uint32Array): Array<number | null> {
  return Array.from(keep, (i) => finiteOrNull(values[i]));
}

/** Probability of class `c` per row from the stored layout. */
function classScores(pooled: PooledPredictions, width: number, c: number): Float64Array {
  const rows = pooled.truth.length;
  const out = new Float64Array(rows);
  if (pooled.task === "binary") {
    for (let i = 0; i < rows; i++) out[i] = c === 1 ? pooled.predictions[i] : 1 - pooled.predictions[i];
  } else {
    for (let i = 0; i < rows; i++) out[i] = pooled.predictions[i * width + c];
  }
  // Stored float32 probabilities can sit a rounding step outside [0, 1] after 1 − p.
  for (let i = 0; i < rows; i++) out[i] = Math.min(1, Math.max(0, out[i]));
  return out;
}

/** Hard labels: binary by the threshold on P(positive class), multiclass by the most probable class. */
function hardLabels(pooled: PooledPredictions, width: number, positive: number, threshold: number, scores: Float64Array): Int32Array {
  const rows = pooled.truth.length;
  const out = new Int32Array(rows);
  if (pooled.task === "binary") {
    for (let i = 0; i < rows; i++) out[i] = scores[i] >= threshold ? positive : 1 - positive;
    return out;
  }
  for (let i = 0; i < rows; i++) {
    let best = 0;
    for (let c = 1; c < width; c++) if (pooled.predictions[i * width + c] > pooled.predictions[i * width + best]) best = c;
    out[i] = best;
  }
  return out;
}

function classDiagnostics(pooled: PooledPredictions, options: DiagnosticsOptions): NonNullable<TrialDiagnostics["classification"]> {
  const classes = pooled.labels.length;
  const width = pooled.task === "binary" ? 1 : classes;
  const positive = options.positive ?? (pooled.task === "binary" ? 1 : 0);
  if (!Number.isInteger(positive) || positive < 0 || positive >= classes) {
    throw new RangeError(`positive class ${positive} is outside 0..${classes - 1} (${pooled.labels.join(", ")})`);
  }
  const truth = pooled.truth as Int32Array;
  const rows = truth.length;
  const isPositive = new Uint8Array(rows);
  let positives = 0;
  for (let i = 0; i < rows; i++) {
    isPositive[i] = truth[i] === positive ? 1 : 0;
    positives += isPositive[i];
  }
  const scores = classScores(pooled, width, positive);

  const pr = precisionRecallCurve(isPositive, scores);
  const prKeep = thinnedIndices(pr.recall.length, options.points);
  const roc = rocCurve(isPositive, scores);
  const rocKeep = thinnedIndices(roc.falsePositiveRate.length, options.points);
  // precision_recall_curve's last point (recall 0, precision 1) has no threshold.
  const prThresholds = Float64Array.from({ length: pr.recall.length }, (_, k) => (k < pr.thresholds.length ? pr.thresholds[k] : Number.NaN));

  const bins = calibrationBins(isPositive, scores, options.bins, options.strategy);
  const matrix = confusionMatrix(truth, hardLabels(pooled, width, positive, options.threshold, scores), classes);
  let predicted = 0;
  let actual = 0;
  for (let c = 0; c < classes; c++) {
    predicted += matrix[c * classes + positive];
    actual += matrix[positive * classes + c];
  }
  const truePositives = matrix[positive * classes + positive];
  const precision = predicted === 0 ? 0 : truePositives / predicted;
  const recall = actual === 0 ? 0 : truePositives / actual;
  const rowsOfMatrix: number[][] = [];
  for (let t = 0; t < classes; t++) rowsOfMatrix.push(Array.from(matrix.subarray(t * classes, (t + 1) * classes)));

  return {
    positive: { index: positive, label: pooled.labels[positive], rows: positives },
    precision_recall: { x: thinned(pr.recall, prKeep), y: thinned(pr.precision, prKeep), thresholds: thinned(prThresholds, prKeep) },
    average_precision: finiteOrNull(averagePrecision(isPositive, scores)),
    roc: { x: thinned(roc.falsePositiveRate, rocKeep), y: thinned(roc.truePositiveRate, rocKeep), thresholds: thinned(roc.thresholds, rocKeep) },
    roc_auc: finiteOrNull(rocAuc(isPositive, scores)),
    calibration: {
      strategy: options.strategy,
      bins: options.bins,
      mean_predicted: listOf(bins.meanPredicted),
      fraction_positive: listOf(bins.fractionPositive),
      count: Array.from(bins.count),
      expected_calibration_error: finiteOrNull(expectedCalibrationError(bins)),
    },
    confusion: {
      threshold: pooled.task === "binary" ? options.threshold : null,
      labels: [...pooled.labels],
      matrix: rowsOfMatrix,
      accuracy: finiteOrNull(accuracy(matrix)),
      precision,
      recall,
      f1: precision + recall === 0 ? 0 : (2 * precision * recall) / (precision + recall),
    },
  };
}

function regressionDiagnostics(pooled: PooledPredictions, options: DiagnosticsOptions): NonNullable<TrialDiagnostics["regression"]> {
  const actual = pooled.truth as Float64Array;
  const predicted = Float64Array.from(pooled.predictions);
  const keep = thinnedIndices(actual.length, options.points);
  return {
    actual: thinned(actual, keep),
    predicted: thinned(predicted, keep),
    rmse: finiteOrNull(rootMeanSquaredError(actual, predicted)),
    mae: finiteOrNull(meanAbsoluteError(actual, predicted)),
    r2: finiteOrNull(r2Score(actual, predicted)),
  };
}

/**
 * What a trial's out-of-fold predictions say beyond its score: precision-recall and ROC curves,
 * a reliability diagram and a confusion matrix at a threshold for a classifier; actual against
 * predicted for a regressor. Areas and errors are computed on every row; only the curves sent
 * for drawing are thinned.
 */
export function trialDiagnostics(pooled: PooledPredictions, options: DiagnosticsOptions): TrialDiagnostics {
  const rows = pooled.truth.length;
  const classification = pooled.task === "regression" || rows === 0 ? null : classDiagnostics(pooled, options);
  const regression = pooled.task === "regression" && rows > 0 ? regressionDiagnostics(pooled, options) : null;
  return { task: pooled.task, rows, folds: [...pooled.folds], classification, regression };
}
