/**
 * Reusable working memory for the ranking metrics (average precision, ROC AUC, their curves).
 *
 * Greedy ensemble selection scores thousands of candidate ensembles on the same rows, so the
 * metrics must not allocate per call. Pass one scratch per caller to reuse its buffers; a call
 * without one uses a scratch shared by the module (safe because the metrics are synchronous
 * and never call back into user code). Buffers only grow; at n rows a scratch holds about
 * 40·n bytes plus 1 MiB of radix-sort counters.
 */
export class MetricScratch {
  /** Scores split by class: positives from the front, negatives from the back. */
  scores = new Float64Array(0);
  /** Second buffer of the radix sort. */
  sortBuffer = new Float64Array(0);
  /** Cumulative true and false positives and the threshold at each distinct score. */
  truePositives = new Float64Array(0);
  falsePositives = new Float64Array(0);
  thresholds = new Float64Array(0);
  /** Radix sort digit counters, allocated on first use of the radix path. */
  digitCounts = new Uint32Array(0);

  /** Makes every row buffer hold at least `rows` values. */
  reserve(rows: number): void {
    if (this.scores.length >= rows) return;
    const size = Math.max(rows, Math.ceil(this.scores.length * 1.5));
    this.scores = new Float64Array(size);
    this.sortBuffer = new Float64Array(size);
    this.truePositives = new Float64Array(size);
    this.falsePositives = new Float64Array(size);
    this.thresholds = new Float64Array(size);
  }
}

export function createMetricScratch(): MetricScratch {
  return new MetricScratch();
}

export const sharedScratch = new MetricScratch();
