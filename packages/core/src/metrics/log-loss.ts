import { checkClassPredictions } from "./prediction-shape.js";

/** Machine epsilon of float64, scikit-learn's clipping bound for float64 probabilities. */
export const LOG_LOSS_EPSILON = 2.220446049250313e-16;

/**
 * Log loss (cross-entropy) as scikit-learn's `log_loss`: −(1/n) Σ_i ln p_i,y_i with natural
 * log, each probability clipped to [ε, 1 − ε] so a confident mistake costs ln(1/ε) ≈ 36.04
 * instead of infinity. Rows are not renormalised (current scikit-learn only warns when a row
 * does not sum to 1). `predictions` is row-major with one column per class.
 */
export function logLoss(y: Int32Array, predictions: Float64Array, width: number): number {
  checkClassPredictions(y, predictions, width);
  const n = y.length;
  if (n === 0) return Number.NaN;
  let sum = 0;
  for (let i = 0; i < n; i++) {
    let p = predictions[i * width + y[i]];
    if (!(p >= 0 && p <= 1)) throw new RangeError(`probability ${p} at row ${i} is outside [0, 1]`);
    if (p < LOG_LOSS_EPSILON) p = LOG_LOSS_EPSILON;
    else if (p > 1 - LOG_LOSS_EPSILON) p = 1 - LOG_LOSS_EPSILON;
    sum -= Math.log(p);
  }
  return sum / n;
}
