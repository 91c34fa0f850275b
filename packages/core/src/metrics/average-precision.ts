import { type MetricScratch, sharedScratch } from "./scratch.js";
import { type ThresholdCounts, countByThreshold, macroOverClasses } from "./threshold-counts.js";

/**
 * Average precision as scikit-learn defines it (`average_precision_score`):
 * AP = Σ_k (R_k − R_{k−1}) · P_k over distinct score thresholds from the highest down, with
 * R_0 = 0; a step function, no interpolation and no trapezoid. Tied scores form one threshold,
 * so a tie between a positive and a negative is never broken in the positive's favour.
 */
function averagePrecisionOf(counts: ThresholdCounts): number {
  // scikit-learn sets recall to 1 everywhere when there are no positives, which gives AP = 0.
  if (counts.positives === 0) return 0;
  const { truePositives, falsePositives, positives } = counts;
  let sum = 0;
  let previousTruePositives = 0;
  for (let k = 0; k < counts.length; k++) {
    const tp = truePositives[k];
    sum += ((tp - previousTruePositives) / positives) * (tp / (tp + falsePositives[k]));
    previousTruePositives = tp;
  }
  return sum;
}

/**
 * Average precision of `scores` for the rows where `positive` is non-zero.
 * Returns 0 when there is no positive row (scikit-learn's value, with its warning dropped).
 */
export function averagePrecision(
  positive: Uint8Array,
  scores: Float64Array | Float32Array,
  scratch: MetricScratch = sharedScratch,
): number {
  return averagePrecisionOf(countByThreshold(positive, scores, false, scratch));
}

/**
 * Average precision on a row-major probability matrix: binary (width 2) scores column 1 for
 * class 1; multiclass is the unweighted mean over the label-binarised columns (class c against
 * the rest, scored by column c), scikit-learn's 'macro' average.
 * Classes absent from `y` are left out of the mean (scikit-learn refuses such input); NaN if
 * `y` is empty.
 */
export function macroAveragePrecision(
  y: Int32Array,
  predictions: Float64Array,
  width: number,
  scratch: MetricScratch = sharedScratch,
): number {
  return macroOverClasses(y, predictions, width, scratch, averagePrecisionOf, (counts) => counts.positives > 0);
}
