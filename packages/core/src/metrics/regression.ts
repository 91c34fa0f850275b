import { checkValuePredictions } from "./prediction-shape.js";

/*
 * Regression errors as scikit-learn defines them (`mean_squared_error(squared=False)` /
 * `root_mean_squared_error`, `mean_absolute_error`, `r2_score`). NaN for no rows.
 */

export function rootMeanSquaredError(y: ArrayLike<number>, predictions: Float64Array): number {
  checkValuePredictions(y, predictions, 1);
  const n = y.length;
  if (n === 0) return Number.NaN;
  let sum = 0;
  for (let i = 0; i < n; i++) {
    const error = y[i] - predictions[i];
    sum += error * error;
  }
  return Math.sqrt(sum / n);
}

export function meanAbsoluteError(y: ArrayLike<number>, predictions: Float64Array): number {
  checkValuePredictions(y, predictions, 1);
  const n = y.length;
  if (n === 0) return Number.NaN;
  let sum = 0;
  for (let i = 0; i < n; i++) sum += Math.abs(y[i] - predictions[i]);
  return sum / n;
}

/**
 * Coefficient of determination R² = 1 − Σ(y − ŷ)² / Σ(y − ȳ)². For a constant target
 * scikit-learn's `force_finite` rule applies: 1 for a perfect fit, otherwise 0.
 */
export function r2Score(y: ArrayLike<number>, predictions: Float64Array): number {
  checkValuePredictions(y, predictions, 1);
  const n = y.length;
  if (n === 0) return Number.NaN;
  let mean = 0;
  for (let i = 0; i < n; i++) mean += y[i];
  mean /= n;
  let residual = 0;
  let total = 0;
  for (let i = 0; i < n; i++) {
    const error = y[i] - predictions[i];
    const spread = y[i] - mean;
    residual += error * error;
    total += spread * spread;
  }
  if (total === 0) return residual === 0 ? 1 : 0;
  return 1 - residual / total;
}
