import { averagePrecision as coreAveragePrecision } from "@nightshift/core";

/**
 * Average precision of one probability column of row-major predictions (width columns),
 * with the project's own metric (checked against scikit-learn in packages/core/test).
 */
export function averagePrecisionOfColumn(scores: Float64Array, width: number, column: number, labels: ArrayLike<number>): number {
  const rows = labels.length;
  const positive = new Uint8Array(rows);
  const values = new Float64Array(rows);
  for (let i = 0; i < rows; i++) {
    positive[i] = labels[i] === 1 ? 1 : 0;
    values[i] = scores[i * width + column];
  }
  return coreAveragePrecision(positive, values);
}

/** Average precision of scores against 0/1 labels. */
export function averagePrecision(positive: ArrayLike<number>, scores: ArrayLike<number>): number {
  return coreAveragePrecision(Uint8Array.from(positive), Float64Array.from(scores));
}
