import { allRows, createRng, type CategoricalColumn, type FeatureColumn, type NumericColumn, type Task, type TrainView } from "@nightshift/core";

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

/**
 * Average precision as scikit-learn defines it (METHODS.md §5): rows sorted by score descending,
 * tied scores form one threshold, AP = Σ (R_n − R_{n−1})·P_n with no interpolation.
 */
export function averagePrecision(positive: ArrayLike<boolean>, scores: ArrayLike<number>): number {
  const order = Array.from({ length: scores.length }, (_, i) => i).sort((a, b) => scores[b] - scores[a]);
  let positives = 0;
  for (let i = 0; i < positive.length; i++) if (positive[i]) positives++;
  let tp = 0;
  let seen = 0;
  let ap = 0;
  let previousRecall = 0;
  for (let i = 0; i < order.length; ) {
    const score = scores[order[i]];
    while (i < order.length && scores[order[i]] === score) {
      if (positive[order[i]]) tp++;
      seen++;
      i++;
    }
    const recall = tp / positives;
    ap += (recall - previousRecall) * (tp / seen);
    previousRecall = recall;
  }
  return ap;
}

/** Column `c` of a row-major matrix of width `width`. */
export function column(matrix: Float64Array, width: number, c: number): Float64Array {
  const out = new Float64Array(matrix.length / width);
  for (let i = 0; i < out.length; i++) out[i] = matrix[i * width + c];
  return out;
}
