import { averagePrecision, type Metric, rocAuc, type Task } from "@nightshift/core";
import { type BinCounter, createBinCounter } from "./bin-count-kernel.js";
import { createLogLossKernel, type LogLossKernel } from "./log-loss-kernel.js";

/** Smallest and largest value of a prediction array. */
export interface ValueRange {
  readonly min: number;
  readonly max: number;
}

/** Smallest and largest value; both NaN when any value is NaN. */
export function valueRange(values: Float32Array | Float64Array): ValueRange {
  let min = Infinity;
  let max = -Infinity;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v !== v) return { min: Number.NaN, max: Number.NaN };
    if (v < min) min = v;
    if (v > max) max = v;
  }
  return { min, max };
}

/**
 * Scores the ensembles greedy selection tries: the metric of (sum + candidate) / divisor, where
 * `sum` is the running sum of the members picked so far (stored layout, owned by the scorer so
 * a kernel can keep it in its own memory) and `divisor` the number of picks after adding the
 * candidate. Nothing proportional to the rows is allocated per call.
 *
 * Some metrics also offer cheap `bounds`: an interval that surely holds the exact score, from
 * one counting pass without a sort, so selection can skip candidates that cannot win.
 */
export interface HillclimbScorer {
  readonly metric: Metric;
  readonly bounded: boolean;
  /** The running sum of picks (rows × width); selection adds into it. */
  readonly sum: Float64Array;
  /** `ranges`, when the caller knows them, saves a scorer that bins the scores two passes. */
  score(add: Float32Array | null, divisor: number, ranges?: { readonly sum: ValueRange; readonly add: ValueRange }): number;
  /** Writes [lower, upper] into `out`, `sumRange` being the current range of `sum`; only when `bounded`. */
  bounds(sumRange: ValueRange, add: Float32Array | null, addRange: ValueRange, out: Float64Array): void;
}

/**
 * The scorer of a metric on a target. Binary average precision and ROC AUC, and binary log
 * loss, have dedicated kernels; every other metric is computed by the registry's own function
 * on the materialised average (full-width layout), so it is exactly the board's metric.
 */
export function createHillclimbScorer(metric: Metric, task: Task, target: Int32Array | Float64Array, width: number): HillclimbScorer {
  if (task === "binary" && target instanceof Int32Array) {
    if (metric.name === "average_precision" || metric.name === "roc_auc") return new BinaryRankScorer(metric, target);
    if (metric.name === "log_loss") return new BinaryLogLossScorer(metric, target);
  }
  return new RegistryScorer(metric, task, target, width);
}

class RegistryScorer implements HillclimbScorer {
  readonly bounded = false;
  readonly sum: Float64Array;
  private readonly buffer: Float64Array;
  private readonly fullWidth: number;

  constructor(
    readonly metric: Metric,
    private readonly task: Task,
    private readonly target: Int32Array | Float64Array,
    private readonly width: number,
  ) {
    this.fullWidth = task === "binary" ? 2 : width;
    this.buffer = new Float64Array(target.length * this.fullWidth);
    this.sum = new Float64Array(target.length * width);
  }

  score(add: Float32Array | null, divisor: number): number {
    const { buffer, sum } = this;
    if (this.task === "binary") {
      for (let i = 0; i < sum.length; i++) {
        const q = (sum[i] + (add === null ? 0 : add[i])) / divisor;
        buffer[2 * i] = 1 - q;
        buffer[2 * i + 1] = q;
      }
    } else if (add === null) for (let i = 0; i < sum.length; i++) buffer[i] = sum[i] / divisor;
    else for (let i = 0; i < sum.length; i++) buffer[i] = (sum[i] + add[i]) / divisor;
    return this.metric.score(this.target, buffer, this.fullWidth);
  }

  bounds(): void {
    throw new Error(`${this.metric.name} has no cheap bounds`);
  }
}

/**
 * Binary average precision and ROC AUC. Both depend only on the order of the scores and their
 * ties, and dividing by the number of picks keeps the order, so the exact score is computed on
 * the sums, with the result of core's scikit-learn-checked functions. Dividing could only merge two sums that
 * differ in the last bit of a double; sums of float32 probabilities are multiples of 2^-24 of
 * their smallest term, far coarser, so this does not happen for probabilities above ~1e-9.
 *
 * Bounds: the sums are counted into B equal-width bins per class (one pass, no sort). Rows in
 * different bins are ordered; within a bin any order and any ties are possible, so
 * - ROC AUC: pairs across bins count exactly; the a·b positive-negative pairs inside a bin
 *   count between 0 and 1 each;
 * - average precision: with TP, FP counted above the bin and a positives, b negatives inside,
 *   each positive's precision is at most (TP + a)/(TP + FP + a) (all positives tied at the top).
 *   Rows below the bin are unaffected by its order. (Only this upper side is computed: selection
 *   maximises AP; the lower bound is reported as 0.)
 */
class BinaryRankScorer implements HillclimbScorer {
  readonly bounded = true;
  readonly sum: Float64Array;
  private readonly counter: BinCounter;
  private readonly positive: Uint8Array;
  /** Per bin: 0, or 1 + the start of its gathered segment. */
  private readonly starts: Int32Array;
  private readonly positives: number;
  private readonly binCount: number;
  private readonly isAveragePrecision: boolean;

  constructor(
    readonly metric: Metric,
    target: Int32Array,
  ) {
    const n = target.length;
    this.positive = new Uint8Array(n);
    for (let i = 0; i < n; i++) this.positive[i] = target[i] === 1 ? 1 : 0;
    this.isAveragePrecision = metric.name === "average_precision";
    // About four rows per bin: finer bins prune more candidates but cost more to clear and scan
    // (2^13 to 2^17 bins timed on 10^5 rows with bench/ensemble-selection.bench.ts; 2^15 was fastest).
    this.binCount = Math.min(1 << 16, Math.max(1 << 8, nextPowerOfTwo(Math.ceil(n / 4))));
    this.counter = createBinCounter(this.positive, this.binCount);
    this.starts = new Int32Array(this.binCount + 1);
    let positives = 0;
    for (let i = 0; i < n; i++) positives += this.positive[i];
    this.positives = positives;
    this.sum = this.counter.sum;
  }

  /**
   * The exact score, through the same bins: rows are counted per bin; only bins whose order
   * matters (a positive together with any other row) are gathered and sorted, by class; then
   * the distinct scores are walked from the top as core's `averagePrecision` and `rocAuc` walk
   * them (same thresholds, same expressions, same order), so the result is theirs bit for bit,
   * at the cost of two kernel passes and short sorts instead of a full sort.
   */
  score(add: Float32Array | null, _divisor: number, ranges?: { readonly sum: ValueRange; readonly add: ValueRange }): number {
    const { positive, counter, binCount, sum } = this;
    const sumRange = ranges?.sum ?? valueRange(sum);
    const addRange = add === null ? { min: 0, max: 0 } : (ranges?.add ?? valueRange(add));
    const lo = sumRange.min + addRange.min;
    const hi = sumRange.max + addRange.max;
    if (!Number.isFinite(lo) || !Number.isFinite(hi)) {
      // Core refuses non-finite scores with its own message.
      const values = Float64Array.from(sum, (v, i) => v + (add === null ? 0 : add[i]));
      return this.isAveragePrecision ? averagePrecision(positive, values) : rocAuc(positive, values);
    }
    const scale = hi > lo ? binCount / (hi - lo) : 0;
    if (add !== null) counter.candidate.set(add);
    counter.count(add !== null, lo, scale);
    const { counts, steps, cursors, segments } = counter;
    const { starts } = this;
    const n = sum.length;
    let cursor = 0;
    let positives = 0;
    let negatives = 0;
    for (let bin = 0; bin <= binCount; bin++) {
      const a = counts[2 * bin + 1];
      const b = counts[2 * bin];
      positives += a;
      negatives += b;
      if (a > 0 && (b > 0 || a > 1)) {
        starts[bin] = cursor + 1;
        steps[bin] = 1;
        cursors[2 * bin + 1] = cursor;
        cursors[2 * bin] = cursor + a;
        cursor += a + b;
      } else {
        starts[bin] = 0;
        steps[bin] = 0;
        cursors[2 * bin] = n;
        cursors[2 * bin + 1] = n;
      }
    }
    counter.gather(add !== null, lo, scale);
    let tp = 0;
    let fp = 0;
    let precisionSum = 0;
    let twiceArea = 0;
    for (let bin = binCount; bin >= 0; bin--) {
      const a = counts[2 * bin + 1];
      const b = counts[2 * bin];
      if (starts[bin] === 0) {
        if (a === 0) {
          // Negatives only: each of their thresholds adds Δfp·2·tp to twice the area and +0 to AP.
          twiceArea += b * (tp + tp);
          fp += b;
        } else if (a === 1) {
          const previous = tp;
          tp += 1;
          precisionSum += ((tp - previous) / positives) * (tp / (tp + fp));
        }
        continue;
      }
      const start = starts[bin] - 1;
      sortRange(segments, start, start + a);
      sortRange(segments, start + a, start + a + b);
      let p = start + a - 1;
      let q = start + a + b - 1;
      while (p >= start || q >= start + a) {
        let threshold: number;
        if (p < start) threshold = segments[q];
        else if (q < start + a) threshold = segments[p];
        else threshold = segments[p] > segments[q] ? segments[p] : segments[q];
        const previousTp = tp;
        const previousFp = fp;
        while (p >= start && segments[p] === threshold) {
          tp++;
          p--;
        }
        while (q >= start + a && segments[q] === threshold) {
          fp++;
          q--;
        }
        precisionSum += ((tp - previousTp) / positives) * (tp / (tp + fp));
        twiceArea += (fp - previousFp) * (tp + previousTp);
      }
    }
    if (this.isAveragePrecision) return positives === 0 ? 0 : precisionSum;
    return positives === 0 || negatives === 0 ? Number.NaN : twiceArea / (2 * positives * negatives);
  }

  bounds(sumRange: ValueRange, add: Float32Array | null, addRange: ValueRange, out: Float64Array): void {
    const { counter, binCount } = this;
    // Rounding is monotone, so every sum + add lies in [lo, hi] and equal sums share a bin.
    const lo = add === null ? sumRange.min : sumRange.min + addRange.min;
    const hi = add === null ? sumRange.max : sumRange.max + addRange.max;
    if (!Number.isFinite(lo) || !Number.isFinite(hi)) {
      // A NaN or infinite prediction: no bound, the exact score decides.
      out[0] = -Infinity;
      out[1] = Infinity;
      return;
    }
    const scale = hi > lo ? binCount / (hi - lo) : 0;
    if (add !== null) counter.candidate.set(add);
    counter.count(add !== null, lo, scale);
    if (this.isAveragePrecision) {
      // No positive row: scikit-learn's AP is 0 (core's value too). Only the optimistic side is
      // needed (AP is maximised); a pessimistic one would cost a division per bin, so it is 0.
      out[0] = 0;
      out[1] = this.positives === 0 ? 0 : counter.averagePrecisionUpper() / this.positives;
    } else rocAucBounds(counter.counts, binCount + 1, out);
    // The exact score sums in another order: widen by far more than its rounding error.
    out[0] -= BOUND_SLACK;
    out[1] += BOUND_SLACK;
  }
}

/** Ascending sort of values[from, to): insertion sort for the short runs most bins hold. */
function sortRange(values: Float64Array, from: number, to: number): void {
  if (to - from > 32) {
    values.subarray(from, to).sort();
    return;
  }
  for (let i = from + 1; i < to; i++) {
    const v = values[i];
    let j = i - 1;
    while (j >= from && values[j] > v) {
      values[j + 1] = values[j];
      j--;
    }
    values[j + 1] = v;
  }
}

const BOUND_SLACK = 1e-9;

function nextPowerOfTwo(n: number): number {
  let p = 1;
  while (p < n) p *= 2;
  return p;
}

/** counts: per bin [negatives, positives], bins ascending by score. */
function rocAucBounds(counts: Int32Array, binCount: number, out: Float64Array): void {
  let negativesBelow = 0;
  let positives = 0;
  let cross = 0;
  let within = 0;
  for (let bin = 0; bin < binCount; bin++) {
    const b = counts[2 * bin];
    const a = counts[2 * bin + 1];
    cross += a * negativesBelow;
    within += a * b;
    negativesBelow += b;
    positives += a;
  }
  const pairs = positives * negativesBelow;
  out[0] = pairs === 0 ? Number.NaN : cross / pairs;
  out[1] = pairs === 0 ? Number.NaN : (cross + within) / pairs;
}

/**
 * Binary log loss, clipped as scikit-learn's (core's `logLoss`). The logarithm dominates the
 * cost, so the probabilities of 16 rows are multiplied first and one logarithm is taken per
 * run (log-loss-kernel.ts): ln Π p = Σ ln p up to ~16 roundings of a product (relative 1e-15),
 * far below any difference selection acts on.
 */
class BinaryLogLossScorer implements HillclimbScorer {
  readonly bounded = false;
  readonly sum: Float64Array;
  private readonly kernel: LogLossKernel;

  constructor(
    readonly metric: Metric,
    target: Int32Array,
  ) {
    this.kernel = createLogLossKernel(Uint8Array.from(target, (y) => (y === 1 ? 1 : 0)));
    this.sum = this.kernel.sum;
  }

  score(add: Float32Array | null, divisor: number): number {
    if (add !== null) this.kernel.candidate.set(add);
    return this.kernel.logLoss(add !== null, divisor);
  }

  bounds(): void {
    throw new Error("log loss has no cheap bounds");
  }
}
