/**
 * Cholesky factorisation A = L·Lᵀ of a symmetric positive definite p×p matrix (row-major) and the
 * two triangular solves (Golub & Van Loan, Matrix Computations, 4th ed., Algorithm 4.2.1).
 * Returns null when a pivot is not clearly positive (the matrix is singular to working precision).
 */
export function choleskyFactor(a: Float64Array, p: number): Float64Array | null {
  const l = new Float64Array(p * p);
  let largestDiagonal = 0;
  for (let j = 0; j < p; j++) largestDiagonal = Math.max(largestDiagonal, a[j * p + j]);
  const floor = p * Number.EPSILON * largestDiagonal;
  for (let j = 0; j < p; j++) {
    let pivot = a[j * p + j];
    for (let k = 0; k < j; k++) pivot -= l[j * p + k] * l[j * p + k];
    if (!(pivot > floor)) return null;
    const root = Math.sqrt(pivot);
    l[j * p + j] = root;
    for (let i = j + 1; i < p; i++) {
      let sum = a[i * p + j];
      for (let k = 0; k < j; k++) sum -= l[i * p + k] * l[j * p + k];
      l[i * p + j] = sum / root;
    }
  }
  return l;
}

/** Solves L·Lᵀ·x = b for the factor of `choleskyFactor`. */
export function choleskySolve(l: Float64Array, p: number, b: Float64Array): Float64Array {
  const x = Float64Array.from(b);
  for (let i = 0; i < p; i++) {
    let sum = x[i];
    for (let k = 0; k < i; k++) sum -= l[i * p + k] * x[k];
    x[i] = sum / l[i * p + i];
  }
  for (let i = p - 1; i >= 0; i--) {
    let sum = x[i];
    for (let k = i + 1; k < p; k++) sum -= l[k * p + i] * x[k];
    x[i] = sum / l[i * p + i];
  }
  return x;
}
