import { checkClassPredictions } from "./prediction-shape.js";

/**
 * Brier score as scikit-learn (1.7 and later) defines it.
 * Binary (width 2): (1/n) Σ_i (y_i − p_i)² with p_i = P(class 1) from column 1; range [0, 1].
 * Multiclass: (1/n) Σ_i Σ_c (1[y_i = c] − p_ic)², summed over classes and not halved; range [0, 2].
 */
export function brierScore(y: Int32Array, predictions: Float64Array, width: number): number {
  checkClassPredictions(y, predictions, width);
  const n = y.length;
  if (n === 0) return Number.NaN;
  let sum = 0;
  if (width === 2) {
    for (let i = 0; i < n; i++) {
      const p = predictions[2 * i + 1];
      if (!(p >= 0 && p <= 1)) throw new RangeError(`probability ${p} at row ${i} is outside [0, 1]`);
      const error = y[i] - p;
      sum += error * error;
    }
    return sum / n;
  }
  for (let i = 0; i < n; i++) {
    const row = i * width;
    const label = y[i];
    for (let c = 0; c < width; c++) {
      const p = predictions[row + c];
      if (!(p >= 0 && p <= 1)) throw new RangeError(`probability ${p} at row ${i} is outside [0, 1]`);
      const error = (c === label ? 1 : 0) - p;
      sum += error * error;
    }
  }
  return sum / n;
}
