import type { Metric } from "@nightshift/core";
import { studentTSurvival } from "./student-t.js";

export interface PairedTestResult {
  /** Mean of a − b over the paired folds. */
  readonly meanDifference: number;
  readonly t: number;
  /** Degrees of freedom, J − 1 for J paired folds. */
  readonly df: number;
  /** Two-sided p-value. */
  readonly pValue: number;
}

/**
 * Corrected resampled t-test (Nadeau & Bengio, "Inference for the Generalization Error",
 * Machine Learning 52:239–281, 2003), in the corrected repeated k-fold form of Bouckaert & Frank
 * (PAKDD 2004): with per-fold differences d_j = a_j − b_j on the same J folds,
 *   t = d̄ / sqrt((1/J + n_test/n_train) · σ̂²),  σ̂² the sample variance (J − 1 divisor), df = J − 1.
 * The n_test/n_train term accounts for the overlap of training sets that the naive paired
 * t-test (testFraction = 0) ignores; for k-fold CV n_test/n_train = 1/(k − 1).
 *
 * Fewer than two folds: t and p are NaN. Identical differences (σ̂² = 0): t = ±∞ and p = 0 when
 * they are non-zero, t = 0 and p = 1 when they are all zero.
 */
export function correctedPairedTTest(a: Float64Array, b: Float64Array, testFraction: number): PairedTestResult {
  if (a.length !== b.length) throw new RangeError(`paired scores differ in length (${a.length} vs ${b.length})`);
  if (!(testFraction >= 0) || !Number.isFinite(testFraction)) {
    throw new RangeError(`testFraction (n_test / n_train) must be a finite number ≥ 0, got ${testFraction}`);
  }
  const folds = a.length;
  let sum = 0;
  for (let j = 0; j < folds; j++) {
    const difference = a[j] - b[j];
    if (!Number.isFinite(difference)) throw new RangeError(`fold ${j} has a non-finite score`);
    sum += difference;
  }
  const meanDifference = folds === 0 ? Number.NaN : sum / folds;
  const df = folds - 1;
  if (folds < 2) return { meanDifference, t: Number.NaN, df, pValue: Number.NaN };
  let squares = 0;
  for (let j = 0; j < folds; j++) {
    const deviation = a[j] - b[j] - meanDifference;
    squares += deviation * deviation;
  }
  const variance = squares / df;
  if (variance === 0) {
    if (meanDifference === 0) return { meanDifference, t: 0, df, pValue: 1 };
    return { meanDifference, t: meanDifference > 0 ? Infinity : -Infinity, df, pValue: 0 };
  }
  const t = meanDifference / Math.sqrt((1 / folds + testFraction) * variance);
  return { meanDifference, t, df, pValue: Math.min(1, 2 * studentTSurvival(Math.abs(t), df)) };
}

/**
 * Which trials are statistically tied with the best one, by the corrected resampled t-test at
 * level `alpha` on per-fold scores.
 *
 * `foldScores[i][f]` is trial i's score on fold f (the same folds for every trial); a missing
 * fold is NaN or beyond the end of the array. A trial is compared with the best on the folds
 * both have (so a trial stopped early by successive halving compares on its first folds only).
 *
 * A trial is tied unless the two-sided test rejects equality (p < alpha) and the trial's mean
 * difference points in the worse direction: a trial significantly better than the designated
 * best on their shared folds is not worse than it, so it is reported as tied too. The best is
 * tied with itself, and a trial sharing fewer than two folds with it cannot be told apart, so
 * it is tied. As with any many-against-one comparison, some ties are false negatives and some
 * rejections false positives: a screening aid, not a proof.
 */
export function tiesWithBest(
  foldScores: readonly Float64Array[],
  bestIndex: number,
  direction: Metric["direction"],
  testFraction: number,
  alpha = 0.05,
): boolean[] {
  if (!Number.isInteger(bestIndex) || bestIndex < 0 || bestIndex >= foldScores.length) {
    throw new RangeError(`best index ${bestIndex} is not a trial index in [0, ${foldScores.length})`);
  }
  if (!(alpha > 0 && alpha < 1)) throw new RangeError(`alpha must lie in (0, 1), got ${alpha}`);
  const best = foldScores[bestIndex];
  return foldScores.map((scores, trial) => {
    if (trial === bestIndex) return true;
    const length = Math.min(scores.length, best.length);
    const trialShared = new Float64Array(length);
    const bestShared = new Float64Array(length);
    let shared = 0;
    for (let f = 0; f < length; f++) {
      if (Number.isNaN(scores[f]) || Number.isNaN(best[f])) continue;
      trialShared[shared] = scores[f];
      bestShared[shared] = best[f];
      shared++;
    }
    if (shared < 2) return true;
    const test = correctedPairedTTest(trialShared.subarray(0, shared), bestShared.subarray(0, shared), testFraction);
    const worse = direction === "max" ? test.meanDifference < 0 : test.meanDifference > 0;
    return !(test.pValue < alpha && worse);
  });
}
