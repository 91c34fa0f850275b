/**
 * Scores the boosted tests and benchmark compute. Average precision as scikit-learn defines it
 * (METHODS.md §5: tied scores form one threshold, AP = Σ (R_n − R_{n−1}) P_n, no interpolation).
 * To be replaced by the metrics of @nightshift/core once they exist.
 */
export function averagePrecision(positive: ArrayLike<number>, score: ArrayLike<number>): number {
  const n = score.length;
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => score[b] - score[a]);
  let positives = 0;
  for (let i = 0; i < n; i++) positives += positive[i] ? 1 : 0;
  let tp = 0;
  let fp = 0;
  let recallBefore = 0;
  let ap = 0;
  for (let i = 0; i < n; ) {
    const s = score[order[i]];
    while (i < n && score[order[i]] === s) {
      if (positive[order[i]]) tp++;
      else fp++;
      i++;
    }
    const recall = tp / positives;
    ap += (recall - recallBefore) * (tp / (tp + fp));
    recallBefore = recall;
  }
  return ap;
}

/** Column `column` of a row-major matrix with `width` columns. */
export function column(matrix: Float64Array, width: number, column: number): Float64Array {
  const out = new Float64Array(matrix.length / width);
  for (let i = 0; i < out.length; i++) out[i] = matrix[i * width + column];
  return out;
}

export function rootMeanSquaredError(truth: ArrayLike<number>, predicted: ArrayLike<number>): number {
  let sum = 0;
  for (let i = 0; i < truth.length; i++) sum += (truth[i] - predicted[i]) ** 2;
  return Math.sqrt(sum / truth.length);
}
