/**
 * Reliability-diagram bins and expected calibration error for binary probabilities.
 * Binning follows scikit-learn's `calibration_curve`: 'uniform' cuts [0, 1] into equal widths,
 * 'quantile' cuts at the linearly interpolated percentiles of the predictions (NumPy's default
 * `percentile`); a prediction equal to an inner edge falls in the lower bin, and empty bins are
 * dropped. ECE (Naeini, Cooper & Hauskrecht, AAAI 2015) = Σ_b (n_b / n)·|fraction positive_b −
 * mean predicted_b|; its value depends on the bin count and strategy, so report both with it.
 */
export type CalibrationStrategy = "uniform" | "quantile";

export interface CalibrationBins {
  /** Mean predicted probability of each non-empty bin, bins in ascending order. */
  readonly meanPredicted: Float64Array;
  /** Observed fraction of positive rows in each non-empty bin. */
  readonly fractionPositive: Float64Array;
  /** Rows in each non-empty bin. */
  readonly count: Uint32Array;
}

export function calibrationBins(
  positive: Uint8Array,
  probabilities: Float64Array | Float32Array,
  binCount: number,
  strategy: CalibrationStrategy,
): CalibrationBins {
  const n = probabilities.length;
  if (positive.length !== n) throw new RangeError(`labels and probabilities differ in length (${positive.length} vs ${n})`);
  if (!Number.isInteger(binCount) || binCount < 1) throw new RangeError(`bin count ${binCount} is not a positive integer`);
  if (strategy !== "uniform" && strategy !== "quantile") {
    throw new RangeError(`calibration strategy must be "uniform" or "quantile", got "${String(strategy)}"`);
  }
  for (let i = 0; i < n; i++) {
    const p = probabilities[i];
    if (!(p >= 0 && p <= 1)) throw new RangeError(`probability ${p} at row ${i} is outside [0, 1]`);
  }
  const edges = strategy === "uniform" ? uniformEdges(binCount) : quantileEdges(probabilities, binCount);
  const sums = new Float64Array(binCount);
  const positives = new Float64Array(binCount);
  const totals = new Uint32Array(binCount);
  for (let i = 0; i < n; i++) {
    const p = probabilities[i];
    const bin = innerEdgesBelow(edges, p);
    sums[bin] += p;
    positives[bin] += positive[i] !== 0 ? 1 : 0;
    totals[bin]++;
  }
  let filled = 0;
  for (let b = 0; b < binCount; b++) if (totals[b] > 0) filled++;
  const meanPredicted = new Float64Array(filled);
  const fractionPositive = new Float64Array(filled);
  const count = new Uint32Array(filled);
  for (let b = 0, at = 0; b < binCount; b++) {
    if (totals[b] === 0) continue;
    meanPredicted[at] = sums[b] / totals[b];
    fractionPositive[at] = positives[b] / totals[b];
    count[at] = totals[b];
    at++;
  }
  return { meanPredicted, fractionPositive, count };
}

export function expectedCalibrationError(bins: CalibrationBins): number {
  let rows = 0;
  let weightedGap = 0;
  for (let b = 0; b < bins.count.length; b++) {
    rows += bins.count[b];
    weightedGap += bins.count[b] * Math.abs(bins.fractionPositive[b] - bins.meanPredicted[b]);
  }
  return rows === 0 ? Number.NaN : weightedGap / rows;
}

/** `np.linspace(0, 1, binCount + 1)`: k·(1/binCount), the last edge exactly 1. */
function uniformEdges(binCount: number): Float64Array {
  const edges = new Float64Array(binCount + 1);
  const step = 1 / binCount;
  for (let k = 0; k < binCount; k++) edges[k] = k * step;
  edges[binCount] = 1;
  return edges;
}

/**
 * `np.percentile(p, np.linspace(0, 1, binCount + 1) * 100)` with NumPy's 'linear' method,
 * reproducing its arithmetic so that predictions equal to an edge land in the same bin.
 */
function quantileEdges(probabilities: Float64Array | Float32Array, binCount: number): Float64Array {
  const n = probabilities.length;
  const edges = new Float64Array(binCount + 1);
  if (n === 0) return edges;
  const sorted = Float64Array.from(probabilities).sort();
  const step = 1 / binCount;
  for (let k = 0; k <= binCount; k++) {
    const quantile = k === binCount ? 1 : k * step;
    const position = ((quantile * 100) / 100) * (n - 1);
    const below = Math.floor(position);
    const above = Math.min(below + 1, n - 1);
    const fraction = position - below;
    const low = sorted[below];
    const high = sorted[above];
    const difference = high - low;
    // NumPy's _lerp: interpolate from the nearer end to stay monotone.
    edges[k] = fraction >= 0.5 ? high - difference * (1 - fraction) : low + difference * fraction;
  }
  return edges;
}

/** `np.searchsorted(edges[1:-1], p)` (side 'left'): how many inner edges lie strictly below p. */
function innerEdgesBelow(edges: Float64Array, p: number): number {
  let low = 1;
  let high = edges.length - 1;
  while (low < high) {
    const middle = (low + high) >>> 1;
    if (edges[middle] < p) low = middle + 1;
    else high = middle;
  }
  return low - 1;
}
