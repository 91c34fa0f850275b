/**
 * Split criteria as "proxies": for a candidate split the grower maximises
 * proxy(left) + proxy(right), which orders splits exactly as the weighted impurity decrease
 * N_L·imp(L) + N_R·imp(R) → min does (Breiman et al. 1984, CART; METHODS.md §7), without the
 * parent's terms that are the same for every candidate.
 *
 * Statistics of a side are `K` numbers: per-class row counts n_c (classification, weighted by
 * class weight w_c inside the proxy), or [Σ count, Σ count·y] (regression).
 */
export const CRITERION_GINI = 0;
export const CRITERION_ENTROPY = 1;
export const CRITERION_SQUARED_ERROR = 2;
export type CriterionCode = typeof CRITERION_GINI | typeof CRITERION_ENTROPY | typeof CRITERION_SQUARED_ERROR;

/** Gini: W·(1 − Σ p_c²) = W − Σ v_c²/W with v_c = w_c·n_c, so maximise Σ v_c²/W. */
export function giniProxy(stats: Float64Array, classWeight: Float64Array, classes: number): number {
  let total = 0;
  let squares = 0;
  for (let c = 0; c < classes; c++) {
    const v = classWeight[c] * stats[c];
    total += v;
    squares += v * v;
  }
  return total > 0 ? squares / total : 0;
}

/** Entropy: W·H = W·log W − Σ v_c·log v_c, so maximise Σ v_c·log v_c − W·log W (natural log; the base does not change the choice). */
export function entropyProxy(stats: Float64Array, classWeight: Float64Array, classes: number): number {
  let total = 0;
  let sum = 0;
  for (let c = 0; c < classes; c++) {
    const v = classWeight[c] * stats[c];
    if (v > 0) {
      total += v;
      sum += v * Math.log(v);
    }
  }
  return total > 0 ? sum - total * Math.log(total) : 0;
}

/** Squared error: Σ count·(y − ȳ)² = Σ count·y² − S²/W, and Σ count·y² is fixed, so maximise S²/W. */
export function squaredErrorProxy(stats: Float64Array): number {
  return stats[0] > 0 ? (stats[1] * stats[1]) / stats[0] : 0;
}
