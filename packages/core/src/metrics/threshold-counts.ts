import { type MetricScratch, sharedScratch } from "./scratch.js";
import { SORT_COUNTS_LENGTH, sortFloat64Ascending } from "./float-sort.js";
import { checkClassPredictions } from "./prediction-shape.js";

/**
 * Cumulative counts at each distinct score, highest score first: row k says how many positives
 * and negatives score at least `thresholds[k]`. Tied scores form one threshold. This is the
 * shared base of average precision, ROC AUC and their curves (scikit-learn's
 * `_binary_clf_curve`). The arrays are views into a scratch and are overwritten by its next use.
 */
export interface ThresholdCounts {
  /** Number of distinct scores. */
  readonly length: number;
  readonly positives: number;
  readonly negatives: number;
  readonly truePositives: Float64Array;
  readonly falsePositives: Float64Array;
  /** Filled only when asked for. */
  readonly thresholds: Float64Array;
}

function rejectNonFinite(row: number): never {
  throw new RangeError(`scores must be finite numbers; row ${row} is not`);
}

/** Binary form: `positive[i]` non-zero marks a positive row. */
export function countByThreshold(
  positive: Uint8Array,
  scores: Float64Array | Float32Array,
  withThresholds: boolean,
  scratch: MetricScratch = sharedScratch,
): ThresholdCounts {
  const n = scores.length;
  if (positive.length !== n) {
    throw new RangeError(`labels and scores differ in length (${positive.length} vs ${n})`);
  }
  scratch.reserve(n);
  const split = scratch.scores;
  let positives = 0;
  let back = n;
  for (let i = 0; i < n; i++) {
    const score = scores[i];
    if (score - score !== 0) rejectNonFinite(i);
    if (positive[i] !== 0) split[positives++] = score;
    else split[--back] = score;
  }
  return countSplit(positives, n, withThresholds, scratch);
}

/**
 * One-vs-rest form on a row-major prediction matrix: column `column` scores every row, and the
 * rows whose class index equals `column` are the positives.
 */
export function countColumnByThreshold(
  y: Int32Array,
  predictions: Float64Array,
  width: number,
  column: number,
  withThresholds: boolean,
  scratch: MetricScratch = sharedScratch,
): ThresholdCounts {
  const n = y.length;
  scratch.reserve(n);
  const split = scratch.scores;
  let positives = 0;
  let back = n;
  for (let i = 0, at = column; i < n; i++, at += width) {
    const score = predictions[at];
    if (score - score !== 0) rejectNonFinite(i);
    if (y[i] === column) split[positives++] = score;
    else split[--back] = score;
  }
  return countSplit(positives, n, withThresholds, scratch);
}

/**
 * Sorting positives and negatives separately and merging them from the top needs no
 * permutation array: only the counts per distinct score matter, not which row holds it.
 */
function countSplit(positives: number, n: number, withThresholds: boolean, scratch: MetricScratch): ThresholdCounts {
  const negatives = n - positives;
  if (n >= 1 << 15 && scratch.digitCounts.length < SORT_COUNTS_LENGTH) {
    scratch.digitCounts = new Uint32Array(SORT_COUNTS_LENGTH);
  }
  const positiveScores = scratch.scores.subarray(0, positives);
  const negativeScores = scratch.scores.subarray(positives, n);
  sortFloat64Ascending(positiveScores, scratch.sortBuffer, scratch.digitCounts);
  sortFloat64Ascending(negativeScores, scratch.sortBuffer, scratch.digitCounts);
  const truePositives = scratch.truePositives;
  const falsePositives = scratch.falsePositives;
  const thresholds = scratch.thresholds;
  let p = positives - 1;
  let q = negatives - 1;
  let tp = 0;
  let fp = 0;
  let length = 0;
  while (p >= 0 || q >= 0) {
    let threshold: number;
    if (p < 0) threshold = negativeScores[q];
    else if (q < 0) threshold = positiveScores[p];
    else threshold = positiveScores[p] > negativeScores[q] ? positiveScores[p] : negativeScores[q];
    while (p >= 0 && positiveScores[p] === threshold) {
      tp++;
      p--;
    }
    while (q >= 0 && negativeScores[q] === threshold) {
      fp++;
      q--;
    }
    truePositives[length] = tp;
    falsePositives[length] = fp;
    if (withThresholds) thresholds[length] = threshold;
    length++;
  }
  return { length, positives, negatives, truePositives, falsePositives, thresholds };
}

/**
 * The unweighted ('macro') mean of a ranking metric over the one-vs-rest columns of a
 * row-major probability matrix; binary (width 2) scores column 1 for class 1 alone.
 * Classes for which `defined` says the metric has no value are left out of the mean
 * (scikit-learn refuses such input); NaN if no class is left.
 */
export function macroOverClasses(
  y: Int32Array,
  predictions: Float64Array,
  width: number,
  scratch: MetricScratch,
  metric: (counts: ThresholdCounts) => number,
  defined: (counts: ThresholdCounts) => boolean,
): number {
  checkClassPredictions(y, predictions, width);
  if (width === 2) return metric(countColumnByThreshold(y, predictions, 2, 1, false, scratch));
  let sum = 0;
  let classes = 0;
  for (let c = 0; c < width; c++) {
    const counts = countColumnByThreshold(y, predictions, width, c, false, scratch);
    if (!defined(counts)) continue;
    sum += metric(counts);
    classes++;
  }
  return classes === 0 ? Number.NaN : sum / classes;
}
