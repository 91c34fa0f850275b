/**
 * Checks that a row-major prediction matrix has `width` columns for every row of `y`, and that
 * every class index lies in [0, width).
 */
export function checkClassPredictions(y: Int32Array, predictions: Float64Array, width: number): void {
  if (!Number.isInteger(width) || width < 2) {
    throw new RangeError(`classification predictions need one column per class (at least 2), got width ${width}`);
  }
  if (predictions.length !== y.length * width) {
    throw new RangeError(
      `predictions hold ${predictions.length} values, expected ${y.length} rows × ${width} columns = ${y.length * width}`,
    );
  }
  for (let i = 0; i < y.length; i++) {
    const label = y[i];
    if (label < 0 || label >= width) {
      throw new RangeError(`class index ${label} at row ${i} is outside [0, ${width})`);
    }
  }
}

/** Checks that predictions and targets of a regression have the same length. */
export function checkValuePredictions(y: ArrayLike<number>, predictions: Float64Array, width: number): void {
  if (width !== 1) throw new RangeError(`regression predictions have one column, got width ${width}`);
  if (predictions.length !== y.length) {
    throw new RangeError(`predictions hold ${predictions.length} values for ${y.length} rows`);
  }
}
