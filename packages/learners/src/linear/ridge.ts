import { choleskyFactor, choleskySolve } from "./cholesky.js";

export interface RidgeFit {
  readonly weights: Float64Array;
  readonly intercept: number;
}

/**
 * Ridge regression (Hoerl & Kennard 1970) minimising
 *   (1 / 2n) Σ_i (y_i − x_i·w − b)² + (λ / 2)·‖w‖²,
 * intercept b unpenalised, λ = `penalty`, in closed form: with column means m of X and target
 * mean ȳ,
 *   (X_cᵀX_c / n + λ·I) w = X_cᵀ(y − ȳ) / n,   b = ȳ − m·w,
 * where X_c = X − m (centring makes the intercept drop out of the penalised system), solved by
 * Cholesky. Returns null when the system is singular (collinear design columns and λ = 0).
 */
export function fitRidge(x: Float64Array, n: number, p: number, y: Float64Array, penalty: number): RidgeFit | null {
  const means = new Float64Array(p);
  let targetMean = 0;
  for (let i = 0, row = 0; i < n; i++, row += p) {
    for (let j = 0; j < p; j++) means[j] += x[row + j];
    targetMean += y[i];
  }
  for (let j = 0; j < p; j++) means[j] /= n;
  targetMean /= n;

  const gram = new Float64Array(p * p);
  const moment = new Float64Array(p);
  const centred = new Float64Array(p);
  for (let i = 0, row = 0; i < n; i++, row += p) {
    for (let j = 0; j < p; j++) centred[j] = x[row + j] - means[j];
    const target = y[i] - targetMean;
    for (let j = 0; j < p; j++) {
      const cj = centred[j];
      moment[j] += cj * target;
      const o = j * p;
      for (let k = 0; k <= j; k++) gram[o + k] += cj * centred[k];
    }
  }
  for (let j = 0; j < p; j++) {
    for (let k = 0; k <= j; k++) {
      gram[j * p + k] /= n;
      gram[k * p + j] = gram[j * p + k];
    }
    gram[j * p + j] += penalty;
    moment[j] /= n;
  }
  const factor = choleskyFactor(gram, p);
  if (factor === null) return null;
  const weights = choleskySolve(factor, p, moment);
  let intercept = targetMean;
  for (let j = 0; j < p; j++) intercept -= means[j] * weights[j];
  return { weights, intercept };
}
