import { type Dataset, type Metric, type TableView } from "@nightshift/core";

/** Rows of one fold: the model is fitted on `train` and predicts `test`. */
export interface FoldRows {
  readonly train: Uint32Array;
  readonly test: Uint32Array;
}

/**
 * What a worker holds for one run: the training part of the dataset (hold-out rows
 * never reach a worker before the final step), the folds, the metric, and a memo of
 * fold-specific preprocessing (bins, scaling) reused by later jobs on the same fold.
 */
export interface FoldContext {
  readonly dataset: Dataset;
  readonly folds: readonly FoldRows[];
  readonly metric: Metric;
  readonly memo: Map<string, unknown>;
}

/** Fold rows from each fold's test rows: train is the complement within the dataset. */
export function foldRowsFromTests(rowCount: number, tests: readonly Uint32Array[]): FoldRows[] {
  return tests.map((test) => {
    const inTest = new Uint8Array(rowCount);
    for (let i = 0; i < test.length; i++) inTest[test[i]] = 1;
    const train = new Uint32Array(rowCount - test.length);
    let n = 0;
    for (let r = 0; r < rowCount; r++) if (!inTest[r]) train[n++] = r;
    return { train, test };
  });
}

export function createFoldContext(dataset: Dataset, foldTests: readonly Uint32Array[], metric: Metric): FoldContext {
  return { dataset, folds: foldRowsFromTests(dataset.rowCount, foldTests), metric, memo: new Map() };
}

export function featureView(dataset: Dataset, rows: Uint32Array): TableView {
  return { columns: dataset.features, rows };
}

/** The target of some rows, in the form metrics take. */
export function targetOf(dataset: Dataset, rows: Uint32Array): Int32Array | Float64Array {
  const target = dataset.target;
  if (target.kind === "classes") {
    const out = new Int32Array(rows.length);
    for (let i = 0; i < rows.length; i++) out[i] = target.codes[rows[i]];
    return out;
  }
  const out = new Float64Array(rows.length);
  for (let i = 0; i < rows.length; i++) out[i] = target.values[rows[i]];
  return out;
}
