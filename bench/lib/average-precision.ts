/**
 * Average precision as scikit-learn defines it (METHODS.md §5): scores sorted descending, tied
 * scores form one threshold, AP = Σ (R_n − R_{n−1})·P_n without interpolation.
 */
export function averagePrecision(positive: ArrayLike<number>, scores: ArrayLike<number>): number {
  const order = Array.from({ length: scores.length }, (_, i) => i).sort((a, b) => scores[b] - scores[a]);
  let positives = 0;
  for (let i = 0; i < positive.length; i++) if (positive[i]) positives++;
  let tp = 0;
  let seen = 0;
  let ap = 0;
  let previousRecall = 0;
  for (let i = 0; i < order.length; ) {
    const score = scores[order[i]];
    while (i < order.length && scores[order[i]] === score) {
      if (positive[order[i]]) tp++;
      seen++;
      i++;
    }
    const recall = tp / positives;
    ap += (recall - previousRecall) * (tp / seen);
    previousRecall = recall;
  }
  return ap;
}
