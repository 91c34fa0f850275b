import {
  allRows,
  type CategoricalColumn,
  type ClassTarget,
  createRng,
  type FeatureColumn,
  type NumericColumn,
  type Task,
  type TrainView,
  type ValueTarget,
} from "@nightshift/core";

/** Small views for the boosted tests. */
export const numeric = (name: string, values: ArrayLike<number>): NumericColumn => ({ name, kind: "numeric", values: Float64Array.from(values) });

export const categorical = (name: string, codes: ArrayLike<number>, vocabulary: string[]): CategoricalColumn => ({
  name,
  kind: "categorical",
  codes: Int32Array.from(codes),
  vocabulary,
});

export const classes = (codes: ArrayLike<number>, labels: string[] = ["0", "1"]): ClassTarget => ({
  name: "y",
  kind: "classes",
  codes: Int32Array.from(codes),
  labels,
});

export const values = (target: ArrayLike<number>): ValueTarget => ({ name: "y", kind: "values", values: Float64Array.from(target) });

export function trainView(columns: FeatureColumn[], target: ClassTarget | ValueTarget, task?: Task, rows?: Uint32Array): TrainView {
  const n = columns[0].kind === "categorical" ? columns[0].codes.length : columns[0].values.length;
  const inferred: Task = target.kind === "values" ? "regression" : target.labels.length === 2 ? "binary" : "multiclass";
  return { columns, target, task: task ?? inferred, rows: rows ?? allRows(n) };
}

/**
 * A binary set with signal in x0 and x1 (logistic in x0 + x1 with label noise) and a pure
 * noise column x2, drawn from a seeded stream.
 */
export function noisyBinary(n: number, seed: number): { columns: NumericColumn[]; target: ClassTarget } {
  const rng = createRng("boosted-test", seed);
  const x0 = new Float64Array(n);
  const x1 = new Float64Array(n);
  const x2 = new Float64Array(n);
  const y = new Int32Array(n);
  for (let i = 0; i < n; i++) {
    x0[i] = rng.normal();
    x1[i] = rng.normal();
    x2[i] = rng.normal();
    const p = 1 / (1 + Math.exp(-2 * (x0[i] + 0.5 * x1[i])));
    y[i] = rng.next() < p ? 1 : 0;
  }
  return { columns: [numeric("x0", x0), numeric("x1", x1), numeric("x2", x2)], target: classes(y) };
}
