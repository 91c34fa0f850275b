/**
 * Average precision as scikit-learn defines it (METHODS.md §5): the sum over distinct score
 * thresholds of (R_n − R_{n−1})·P_n, with tied scores forming one threshold, no interpolation.
 * `scores[r * width + column]` is the score of row r; labels are 1 for the positive class.
 */
export function averagePrecision(scores: Float64Array, width: number, column: number, labels: ArrayLike<number>): number {
  const n = labels.length;
  const score = new Float64Array(n);
  for (let r = 0; r < n; r++) score[r] = scores[r * width + column];
  const order = Uint32Array.from({ length: n }, (_, i) => i).sort((a, b) => score[b] - score[a]);
  let positives = 0;
  for (let r = 0; r < n; r++) if (labels[r] === 1) positives++;
  let truePositives = 0;
  let seen = 0;
  let previousRecall = 0;
  let sum = 0;
  for (let i = 0; i < n; ) {
    let j = i;
    while (j < n && score[order[j]] === score[order[i]]) {
      if (labels[order[j]] === 1) truePositives++;
      seen++;
      j++;
    }
    const recall = truePositives / positives;
    sum += (recall - previousRecall) * (truePositives / seen);
    previousRecall = recall;
    i = j;
  }
  return sum;
}
