import { type MetricScratch, sharedScratch } from "./scratch.js";
import { countByThreshold } from "./threshold-counts.js";

/** Points of a precision-recall curve, in scikit-learn's `precision_recall_curve` order. */
export interface PrecisionRecallCurve {
  /** One more than `thresholds`: the last point is (recall 0, precision 1) and has no threshold. */
  readonly precision: Float64Array;
  readonly recall: Float64Array;
  /** Distinct scores, ascending; point k calls positive every row scoring ≥ thresholds[k]. */
  readonly thresholds: Float64Array;
}

/**
 * Precision-recall curve with one point per distinct score (ties form one point), as
 * `precision_recall_curve`: thresholds ascending, so recall decreases along the arrays, and the
 * point (recall 0, precision 1) appended. With no positive row recall is 1 at every threshold
 * (scikit-learn's convention).
 */
export function precisionRecallCurve(
  positive: Uint8Array,
  scores: Float64Array | Float32Array,
  scratch: MetricScratch = sharedScratch,
): PrecisionRecallCurve {
  const counts = countByThreshold(positive, scores, true, scratch);
  const m = counts.length;
  const precision = new Float64Array(m + 1);
  const recall = new Float64Array(m + 1);
  const thresholds = new Float64Array(m);
  for (let k = 0; k < m; k++) {
    const at = m - 1 - k;
    const tp = counts.truePositives[k];
    precision[at] = tp / (tp + counts.falsePositives[k]);
    recall[at] = counts.positives === 0 ? 1 : tp / counts.positives;
    thresholds[at] = counts.thresholds[k];
  }
  precision[m] = 1;
  recall[m] = 0;
  return { precision, recall, thresholds };
}

/** Points of a ROC curve, in scikit-learn's `roc_curve` order. */
export interface RocCurve {
  readonly falsePositiveRate: Float64Array;
  readonly truePositiveRate: Float64Array;
  /** Descending; the first is +Infinity for the point (0, 0) where nothing is called positive. */
  readonly thresholds: Float64Array;
}

export interface RocCurveOptions {
  /**
   * Drop points that lie on a straight segment with equal steps on both sides, as
   * scikit-learn's `drop_intermediate` (default true); the area is unchanged.
   */
  readonly dropIntermediate?: boolean;
}

/**
 * ROC curve with one point per distinct score (ties form one point, a diagonal step), as
 * `roc_curve`: (0, 0) at threshold +Infinity first, then thresholds descending. A rate whose
 * class is absent from the rows is NaN (scikit-learn warns and returns NaN).
 */
export function rocCurve(
  positive: Uint8Array,
  scores: Float64Array | Float32Array,
  options: RocCurveOptions = {},
  scratch: MetricScratch = sharedScratch,
): RocCurve {
  const counts = countByThreshold(positive, scores, true, scratch);
  const { truePositives, falsePositives, length } = counts;
  const keep = new Uint8Array(length).fill(1);
  let kept = length;
  if ((options.dropIntermediate ?? true) && length > 2) {
    for (let k = 1; k < length - 1; k++) {
      const fpBend = falsePositives[k + 1] - 2 * falsePositives[k] + falsePositives[k - 1];
      const tpBend = truePositives[k + 1] - 2 * truePositives[k] + truePositives[k - 1];
      if (fpBend === 0 && tpBend === 0) {
        keep[k] = 0;
        kept--;
      }
    }
  }
  const falsePositiveRate = new Float64Array(kept + 1);
  const truePositiveRate = new Float64Array(kept + 1);
  const thresholds = new Float64Array(kept + 1);
  thresholds[0] = Number.POSITIVE_INFINITY;
  for (let k = 0, at = 1; k < length; k++) {
    if (keep[k] === 0) continue;
    falsePositiveRate[at] = falsePositives[k] / counts.negatives;
    truePositiveRate[at] = truePositives[k] / counts.positives;
    thresholds[at] = counts.thresholds[k];
    at++;
  }
  if (counts.negatives === 0) falsePositiveRate[0] = Number.NaN;
  if (counts.positives === 0) truePositiveRate[0] = Number.NaN;
  return { falsePositiveRate, truePositiveRate, thresholds };
}
