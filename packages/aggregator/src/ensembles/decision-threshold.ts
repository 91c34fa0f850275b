import { precisionRecallCurve } from "@nightshift/core";

/**
 * The probability threshold with the best F1 score on some rows (F1 = 2PR / (P + R) at each
 * distinct score, rows scoring ≥ it called positive); among equal F1 the highest threshold,
 * which calls fewer rows positive. 0.5 when no threshold gives a positive F1 (no positive row).
 * Chosen on out-of-fold rows, so the hold-out plays no part in it.
 */
export function bestF1Threshold(positive: Uint8Array, scores: Float64Array): number {
  const curve = precisionRecallCurve(positive, scores);
  let best = 0.5;
  let bestF1 = 0;
  for (let k = 0; k < curve.thresholds.length; k++) {
    const p = curve.precision[k];
    const r = curve.recall[k];
    const f1 = p + r > 0 ? (2 * p * r) / (p + r) : 0;
    if (f1 > 0 && f1 >= bestF1) {
      bestF1 = f1;
      best = curve.thresholds[k];
    }
  }
  return best;
}
