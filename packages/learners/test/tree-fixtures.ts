import {
  allRows,
  type CategoricalColumn,
  type ClassTarget,
  createRng,
  type FeatureColumn,
  type NumericColumn,
  type TableView,
  type Task,
  type TrainView,
  type ValueTarget,
} from "@nightshift/core";

export const numeric = (name: string, values: ArrayLike<number>): NumericColumn => ({ name, kind: "numeric", values: Float64Array.from(values) });

export const categorical = (name: string, values: readonly (string | null)[]): CategoricalColumn => {
  const vocabulary: string[] = [];
  const codes = Int32Array.from(values, (v) => {
    if (v === null) return -1;
    let code = vocabulary.indexOf(v);
    if (code < 0) code = vocabulary.push(v) - 1;
    return code;
  });
  return { name, kind: "categorical", codes, vocabulary };
};

export const classes = (codes: ArrayLike<number>, labels: readonly string[] = ["no", "yes"]): ClassTarget => ({
  name: "y",
  kind: "classes",
  codes: Int32Array.from(codes),
  labels,
});

export const values = (ys: ArrayLike<number>): ValueTarget => ({ name: "y", kind: "values", values: Float64Array.from(ys) });

export function trainView(columns: FeatureColumn[], target: ClassTarget | ValueTarget, task?: Task): TrainView {
  const n = target.kind === "classes" ? target.codes.length : target.values.length;
  const inferred: Task = task ?? (target.kind === "values" ? "regression" : target.labels.length > 2 ? "multiclass" : "binary");
  return { columns, rows: allRows(n), task: inferred, target };
}

export const rowsOf = (view: TableView | TrainView): TableView => ({ columns: view.columns, rows: view.rows });

/** Seeded synthetic rows: `features` uniform columns in [-1, 1) and a label from a noisy linear rule. */
export function noisyRule(n: number, features: number, seed: number, noise = 0.1): { columns: NumericColumn[]; y: Int32Array } {
  const rng = createRng("fixture", seed);
  const data = Array.from({ length: features }, () => new Float64Array(n));
  const y = new Int32Array(n);
  for (let r = 0; r < n; r++) {
    let score = 0;
    for (let f = 0; f < features; f++) {
      data[f][r] = rng.next() * 2 - 1;
      score += (f % 2 === 0 ? 1 : -0.5) * data[f][r];
    }
    y[r] = score + noise * rng.normal() > 0 ? 1 : 0;
  }
  return { columns: data.map((v, f) => numeric(`x${f}`, v)), y };
}

/** P(class k) of each row from a row-major probability matrix. */
export function column(probabilities: Float64Array, width: number, k: number): number[] {
  const out: number[] = [];
  for (let i = k; i < probabilities.length; i += width) out.push(probabilities[i]);
  return out;
}

export function argmax(probabilities: Float64Array, width: number): number[] {
  const out: number[] = [];
  for (let r = 0; r * width < probabilities.length; r++) {
    let best = 0;
    for (let k = 1; k < width; k++) if (probabilities[r * width + k] > probabilities[r * width + best]) best = k;
    out.push(best);
  }
  return out;
}

export function accuracy(predicted: readonly number[], codes: Int32Array): number {
  let hits = 0;
  for (let i = 0; i < predicted.length; i++) if (predicted[i] === codes[i]) hits++;
  return hits / predicted.length;
}

/**
 * Average precision as scikit-learn defines it (METHODS.md §5: sum over distinct thresholds of
 * (R_n − R_{n−1})·P_n, tied scores form one threshold).
 */
export function averagePrecision(scores: readonly number[], labels: ArrayLike<number>): number {
  const order = scores.map((_, i) => i).sort((a, b) => scores[b] - scores[a]);
  let positives = 0;
  for (let i = 0; i < labels.length; i++) positives += labels[i] === 1 ? 1 : 0;
  let tp = 0;
  let fp = 0;
  let previousRecall = 0;
  let sum = 0;
  for (let i = 0; i < order.length; ) {
    let j = i;
    while (j < order.length && scores[order[j]] === scores[order[i]]) {
      if (labels[order[j]] === 1) tp++;
      else fp++;
      j++;
    }
    const recall = tp / positives;
    sum += (recall - previousRecall) * (tp / (tp + fp));
    previousRecall = recall;
    i = j;
  }
  return sum;
}
