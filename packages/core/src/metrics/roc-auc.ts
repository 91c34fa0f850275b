import { type MetricScratch, sharedScratch } from "./scratch.js";
import { type ThresholdCounts, countByThreshold, macroOverClasses } from "./threshold-counts.js";

/**
 * Area under the ROC curve by the trapezoid rule over the distinct-threshold points, as
 * scikit-learn's `roc_auc_score`. A tie between a positive and a negative becomes a diagonal
 * segment, i.e. counts ½ — the Mann–Whitney U statistic divided by P·N.
 * Twice the area is accumulated in integer counts (exact below 2^53), then divided once.
 */
function rocAucOf(counts: ThresholdCounts): number {
  const { positives, negatives, truePositives, falsePositives } = counts;
  if (positives === 0 || negatives === 0) return Number.NaN;
  let twiceArea = 0;
  let previousTruePositives = 0;
  let previousFalsePositives = 0;
  for (let k = 0; k < counts.length; k++) {
    const tp = truePositives[k];
    const fp = falsePositives[k];
    twiceArea += (fp - previousFalsePositives) * (tp + previousTruePositives);
    previousTruePositives = tp;
    previousFalsePositives = fp;
  }
  return twiceArea / (2 * positives * negatives);
}

/**
 * ROC AUC of `scores` for the rows where `positive` is non-zero.
 * NaN when only one class is present (scikit-learn warns and returns NaN).
 */
export function rocAuc(
  positive: Uint8Array,
  scores: Float64Array | Float32Array,
  scratch: MetricScratch = sharedScratch,
): number {
  return rocAucOf(countByThreshold(positive, scores, false, scratch));
}

/**
 * ROC AUC on a row-major probability matrix: binary (width 2) scores column 1 for class 1;
 * multiclass is one-vs-rest with the unweighted ('macro') mean over classes, as
 * `roc_auc_score(multi_class="ovr", average="macro")`.
 * A class whose one-vs-rest AUC is undefined (absent from `y`, or the only class present) is
 * left out of the mean (scikit-learn refuses such input); NaN if no class is left.
 */
export function macroRocAucOneVsRest(
  y: Int32Array,
  predictions: Float64Array,
  width: number,
  scratch: MetricScratch = sharedScratch,
): number {
  return macroOverClasses(y, predictions, width, scratch, rocAucOf, (counts) => counts.positives > 0 && counts.negatives > 0);
}
