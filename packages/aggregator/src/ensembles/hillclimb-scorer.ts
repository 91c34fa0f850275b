import { averagePrecision, createMetricScratch, type Metric, type MetricScratch, rocAuc, LOG_LOSS_EPSILON, type Task } from "@nightshift/core";

/** Smallest and largest value of a prediction array. */
export interface ValueRange {
  readonly min: number;
  readonly max: number;
}

export function valueRange(values: Float32Array | Float64Array): ValueRange {
  let min = Infinity;
  let max = -Infinity;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v < min) min = v;
    if (v > max) max = v;
  }
  return { min, max };
}

/**
 * Scores the ensembles greedy selection tries: the metric of (sum + candidate) / divisor, where
 * `sum` is the running sum of the members picked so far (stored layout) and `divisor` the
 * number of picks after adding the candidate. Nothing proportional to the rows is allocated
 * per call.
 *
 * Some metrics also offer cheap `bounds`: an interval that surely holds the exact score, from
 * one counting pass without a sort, so selection can skip candidates that cannot win.
 */
export interface HillclimbScorer {
  readonly metric: Metric;
  readonly bounded: boolean;
  score(sum: Float64Array, add: Float32Array | null, divisor: number): number;
  /** Writes [lower, upper] into `out`; only when `bounded`. */
  bounds(sum: Float64Array, sumRange: ValueRange, add: Float32Array | null, addRange: ValueRange, out: Float64Array): void;
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
  }

  score(sum: Float64Array, add: Float32Array | null, divisor: number): number {
    const { buffer } = this;
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
 * the sums (core's scikit-learn-checked functions). Dividing could only merge two sums that
 * differ in the last bit of a double; sums of float32 probabilities are multiples of 2^-24 of
 * their smallest term, far coarser, so this does not happen for probabilities above ~1e-9.
 *
 * Bounds: the sums are counted into B equal-width bins per class (one pass, no sort). Rows in
 * different bins are ordered; within a bin any order and any ties are possible, so
 * - ROC AUC: pairs across bins count exactly; the a·b positive-negative pairs inside a bin
 *   count between 0 and 1 each;
 * - average precision: with TP, FP counted above the bin and a positives, b negatives inside,
 *   each positive's precision is at most (TP + a)/(TP + FP + a) (all positives tied at the top)
 *   and the j-th is at least (TP + j)/(TP + FP + b + j) (all negatives above it). Rows below
 *   the bin are unaffected by its order.
 */
class BinaryRankScorer implements HillclimbScorer {
  readonly bounded = true;
  private readonly positive: Uint8Array;
  private readonly values: Float64Array;
  private readonly scratch: MetricScratch = createMetricScratch();
  private readonly binCount: number;
  private readonly counts: Uint32Array;
  private readonly isAveragePrecision: boolean;

  constructor(
    readonly metric: Metric,
    target: Int32Array,
  ) {
    const n = target.length;
    this.positive = new Uint8Array(n);
    for (let i = 0; i < n; i++) this.positive[i] = target[i] === 1 ? 1 : 0;
    this.values = new Float64Array(n);
    this.isAveragePrecision = metric.name === "average_precision";
    // About eight rows per bin: finer bins prune more candidates but cost more to clear and scan
    // (measured on 10^5 rows in bench/ensemble-selection.bench.ts).
    this.binCount = Math.min(1 << 14, Math.max(1 << 8, nextPowerOfTwo(Math.ceil(n / 8))));
    this.counts = new Uint32Array(2 * this.binCount);
  }

  score(sum: Float64Array, add: Float32Array | null, _divisor: number): number {
    const { values } = this;
    if (add === null) values.set(sum);
    else for (let i = 0; i < values.length; i++) values[i] = sum[i] + add[i];
    return this.isAveragePrecision ? averagePrecision(this.positive, values, this.scratch) : rocAuc(this.positive, values, this.scratch);
  }

  bounds(sum: Float64Array, sumRange: ValueRange, add: Float32Array | null, addRange: ValueRange, out: Float64Array): void {
    const { counts, positive, binCount } = this;
    counts.fill(0);
    const n = sum.length;
    // Rounding is monotone, so every sum + add lies in [lo, hi] and equal sums share a bin.
    const lo = add === null ? sumRange.min : sumRange.min + addRange.min;
    const hi = add === null ? sumRange.max : sumRange.max + addRange.max;
    const scale = hi > lo ? binCount / (hi - lo) : 0;
    const top = binCount - 1;
    if (add === null) {
      for (let i = 0; i < n; i++) {
        let bin = Math.floor((sum[i] - lo) * scale);
        if (bin > top) bin = top;
        counts[(bin << 1) | positive[i]]++;
      }
    } else {
      for (let i = 0; i < n; i++) {
        let bin = Math.floor((sum[i] + add[i] - lo) * scale);
        if (bin > top) bin = top;
        counts[(bin << 1) | positive[i]]++;
      }
    }
    if (this.isAveragePrecision) averagePrecisionBounds(counts, binCount, out);
    else rocAucBounds(counts, binCount, out);
    // The exact score sums in another order: widen by far more than its rounding error.
    out[0] -= BOUND_SLACK;
    out[1] += BOUND_SLACK;
  }
}

const BOUND_SLACK = 1e-9;

function nextPowerOfTwo(n: number): number {
  let p = 1;
  while (p < n) p *= 2;
  return p;
}

/** counts: per bin [negatives, positives], bins ascending by score. */
function averagePrecisionBounds(counts: Uint32Array, binCount: number, out: Float64Array): void {
  let tp = 0;
  let fp = 0;
  let lower = 0;
  let upper = 0;
  for (let bin = binCount - 1; bin >= 0; bin--) {
    const b = counts[2 * bin];
    const a = counts[2 * bin + 1];
    if (a > 0) {
      const above = tp + fp;
      upper += (a * (tp + a)) / (above + a);
      for (let j = 1; j <= a; j++) lower += (tp + j) / (above + b + j);
    }
    tp += a;
    fp += b;
  }
  // No positive row: scikit-learn's AP is 0 (core's value too).
  out[0] = tp === 0 ? 0 : lower / tp;
  out[1] = tp === 0 ? 0 : upper / tp;
}

function rocAucBounds(counts: Uint32Array, binCount: number, out: Float64Array): void {
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

/** Clipped probabilities are multiplied in runs of this many before one logarithm: ε^16 ≈ 3e-251 cannot underflow. */
const LOG_RUN = 16;

/**
 * Binary log loss, clipped as scikit-learn's (core's `logLoss`). The logarithm dominates the
 * cost, so the probabilities of 16 rows are multiplied first and one logarithm is taken per
 * run: ln Π p = Σ ln p up to ~16 roundings of a product (relative 1e-15), far below any
 * difference selection acts on.
 */
class BinaryLogLossScorer implements HillclimbScorer {
  readonly bounded = false;

  constructor(
    readonly metric: Metric,
    private readonly target: Int32Array,
  ) {}

  score(sum: Float64Array, add: Float32Array | null, divisor: number): number {
    const y = this.target;
    const n = y.length;
    if (n === 0) return Number.NaN;
    let total = 0;
    let product = 1;
    let run = 0;
    for (let i = 0; i < n; i++) {
      const q = (sum[i] + (add === null ? 0 : add[i])) / divisor;
      let p = y[i] === 1 ? q : 1 - q;
      if (p < LOG_LOSS_EPSILON) p = LOG_LOSS_EPSILON;
      else if (p > 1 - LOG_LOSS_EPSILON) p = 1 - LOG_LOSS_EPSILON;
      product *= p;
      if (++run === LOG_RUN) {
        total += Math.log(product);
        product = 1;
        run = 0;
      }
    }
    total += Math.log(product);
    return -total / n;
  }

  bounds(): void {
    throw new Error("log loss has no cheap bounds");
  }
}
