import { choleskyFactor, choleskySolve } from "@nightshift/learners";

/**
 * Non-negative least squares by the active-set algorithm of Lawson & Hanson (Solving Least
 * Squares Problems, Prentice-Hall 1974, ch. 23, algorithm NNLS), in its normal-equations form:
 * minimise ½·xᵀGx − hᵀx subject to x ≥ 0, for a symmetric positive definite G (p×p,
 * row-major). Each inner step solves the unconstrained problem on the passive set by
 * Cholesky; a step that would leave the feasible region is cut at the boundary and the
 * variables that reach zero return to the active set.
 */
export function nonNegativeLeastSquares(gram: Float64Array, moment: Float64Array, p: number, maxIterations = 30 * p + 30): Float64Array {
  const x = new Float64Array(p);
  const passive = new Uint8Array(p);
  const tolerance = 1e-12 * Math.max(1, maxAbs(moment));
  const gradient = (): Float64Array => {
    // w = h − Gx, the negative gradient (Lawson & Hanson's dual vector).
    const w = Float64Array.from(moment);
    for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) w[i] -= gram[i * p + j] * x[j];
    return w;
  };
  for (let iteration = 0; iteration < maxIterations; iteration++) {
    const w = gradient();
    let enter = -1;
    for (let j = 0; j < p; j++) if (!passive[j] && w[j] > tolerance && (enter < 0 || w[j] > w[enter])) enter = j;
    if (enter < 0) break;
    passive[enter] = 1;
    for (;;) {
      const z = solvePassive(gram, moment, p, passive);
      if (z === null) {
        // The passive columns are dependent: the entering variable adds nothing; keep it at zero.
        passive[enter] = 0;
        return x;
      }
      let allPositive = true;
      for (let j = 0; j < p; j++) if (passive[j] && z[j] <= 0) allPositive = false;
      if (allPositive) {
        x.set(z);
        break;
      }
      let alpha = Infinity;
      for (let j = 0; j < p; j++) if (passive[j] && z[j] <= 0) alpha = Math.min(alpha, x[j] / (x[j] - z[j]));
      for (let j = 0; j < p; j++) {
        x[j] += alpha * (z[j] - x[j]);
        if (passive[j] && x[j] <= 1e-15) {
          passive[j] = 0;
          x[j] = 0;
        }
      }
    }
  }
  return x;
}

/** Solution of G_PP·z_P = h_P on the passive set P, zero elsewhere; null when G_PP is singular. */
function solvePassive(gram: Float64Array, moment: Float64Array, p: number, passive: Uint8Array): Float64Array | null {
  const index: number[] = [];
  for (let j = 0; j < p; j++) if (passive[j]) index.push(j);
  const k = index.length;
  const sub = new Float64Array(k * k);
  const rhs = new Float64Array(k);
  for (let a = 0; a < k; a++) {
    rhs[a] = moment[index[a]];
    for (let b = 0; b < k; b++) sub[a * k + b] = gram[index[a] * p + index[b]];
  }
  const factor = choleskyFactor(sub, k);
  if (factor === null) return null;
  const solved = choleskySolve(factor, k, rhs);
  const z = new Float64Array(p);
  index.forEach((j, a) => (z[j] = solved[a]));
  return z;
}

function maxAbs(values: Float64Array): number {
  let m = 0;
  for (let i = 0; i < values.length; i++) m = Math.max(m, Math.abs(values[i]));
  return m;
}
