import { allRows, averagePrecision as coreAveragePrecision, createRng, type CategoricalColumn, type FeatureColumn, type NumericColumn, type Task, type TrainView } from "@nightshift/core";

export const numeric = (name: string, values: ArrayLike<number>): NumericColumn => ({ name, kind: "numeric", values: Float64Array.from(values) });

export const categorical = (name: string, vocabulary: string[], codes: ArrayLike<number>): CategoricalColumn => ({
  name,
  kind: "categorical",
  codes: Int32Array.from(codes),
  vocabulary,
});

export function classView(columns: FeatureColumn[], labels: string[], codes: ArrayLike<number>, rows?: Uint32Array): TrainView {
  const task: Task = labels.length === 2 ? "binary" : "multiclass";
  return { columns, rows: rows ?? allRows(codes.length), task, target: { name: "y", kind: "classes", labels, codes: Int32Array.from(codes) } };
}

export function valueView(columns: FeatureColumn[], values: ArrayLike<number>, rows?: Uint32Array): TrainView {
  return { columns, rows: rows ?? allRows(values.length), task: "regression", target: { name: "y", kind: "values", values: Float64Array.from(values) } };
}

/**
 * Gaussian clouds around the given centres (one per class), `perClass` rows each, with unit
 * spread times `spread`; features named x0, x1, ...
 */
export function gaussianClasses(centres: number[][], perClass: number[], spread: number, seed: string): { columns: NumericColumn[]; codes: Int32Array } {
  const rng = createRng("fixture", seed);
  const p = centres[0].length;
  const n = perClass.reduce((a, b) => a + b, 0);
  const values = Array.from({ length: p }, () => new Float64Array(n));
  const codes = new Int32Array(n);
  let row = 0;
  centres.forEach((centre, c) => {
    for (let i = 0; i < perClass[c]; i++, row++) {
      codes[row] = c;
      for (let j = 0; j < p; j++) values[j][row] = centre[j] + spread * rng.normal();
    }
  });
  return { columns: values.map((v, j) => numeric(`x${j}`, v)), codes };
}

/** Core's average precision (scikit-learn's definition) on boolean labels and any numeric scores. */
export function averagePrecision(positive: ArrayLike<boolean>, scores: ArrayLike<number>): number {
  return coreAveragePrecision(Uint8Array.from(Array.from(positive, Number)), Float64Array.from(scores));
}

/** Column `c` of a row-major matrix of width `width`. */
export function column(matrix: Float64Array, width: number, c: number): Float64Array {
  const out = new Float64Array(matrix.length / width);
  for (let i = 0; i < out.length; i++) out[i] = matrix[i * width + c];
  return out;
}
