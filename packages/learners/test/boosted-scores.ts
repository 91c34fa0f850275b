import { averagePrecision as coreAveragePrecision, rootMeanSquaredError as coreRootMeanSquaredError } from "@nightshift/core";

/** Average precision of scores against 0/1 labels, with the project's metric (checked against scikit-learn in packages/core/test). */
export function averagePrecision(positive: ArrayLike<number>, score: ArrayLike<number>): number {
  return coreAveragePrecision(Uint8Array.from(positive, (p) => (p ? 1 : 0)), Float64Array.from(score));
}

/** Column `column` of a row-major matrix with `width` columns. */
export function column(matrix: Float64Array, width: number, column: number): Float64Array {
  const out = new Float64Array(matrix.length / width);
  for (let i = 0; i < out.length; i++) out[i] = matrix[i * width + column];
  return out;
}

export function rootMeanSquaredError(truth: ArrayLike<number>, predicted: ArrayLike<number>): number {
  return coreRootMeanSquaredError(truth, Float64Array.from(predicted));
}
