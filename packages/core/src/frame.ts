import type { Task } from "./task.js";

/**
 * Column-major typed data. Feature columns are either numeric (missing = NaN)
 * or categorical (integer codes into `vocabulary`, missing = MISSING_CODE).
 * Booleans are numeric 0/1 with kind "boolean", so every learner can use them as numbers.
 */
export const MISSING_CODE = -1;

export interface NumericColumn {
  readonly name: string;
  readonly kind: "numeric" | "boolean";
  readonly values: Float32Array | Float64Array;
}

export interface CategoricalColumn {
  readonly name: string;
  readonly kind: "categorical";
  /** Code per row; MISSING_CODE for a missing value. */
  readonly codes: Int32Array;
  /** The category string of each code, in order of first appearance. */
  readonly vocabulary: readonly string[];
}

export type FeatureColumn = NumericColumn | CategoricalColumn;

/** Classification target: class index per row into `labels` (labels sorted as strings or numbers). */
export interface ClassTarget {
  readonly name: string;
  readonly kind: "classes";
  readonly codes: Int32Array;
  readonly labels: readonly string[];
}

/** Regression target. */
export interface ValueTarget {
  readonly name: string;
  readonly kind: "values";
  readonly values: Float64Array;
}

export type Target = ClassTarget | ValueTarget;

/**
 * A subset of rows of some feature columns, without copying: row r of the view
 * is row `rows[r]` of every column. Learners fit and predict on views.
 */
export interface TableView {
  readonly columns: readonly FeatureColumn[];
  readonly rows: Uint32Array;
}

/** A view with the target, for fitting. `target` is indexed by the same underlying rows. */
export interface TrainView extends TableView {
  readonly task: Task;
  readonly target: Target;
}

/** Number of classes of a training view (1 for regression). */
export function classCount(view: TrainView): number {
  return view.target.kind === "classes" ? view.target.labels.length : 1;
}

/** All row indices 0..n-1. */
export function allRows(n: number): Uint32Array {
  const rows = new Uint32Array(n);
  for (let i = 0; i < n; i++) rows[i] = i;
  return rows;
}
