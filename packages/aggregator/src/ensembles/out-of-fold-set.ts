import type { Task } from "@nightshift/core";

/**
 * The candidates' out-of-fold predictions, assembled in dataset row order: every training row
 * predicted once by a model that never saw it (METHODS.md §0). This is the hillclimb set of
 * greedy selection and the training set of the stacker.
 *
 * Predictions are in the stored layout (`storedWidth`): P(positive) for binary tasks, one
 * column per class for multiclass, the value for regression; row-major, `width` per row.
 * With repeated k-fold only the first repeat is used: its folds partition the rows, so each
 * row has exactly one prediction, and the nested estimate's outer folds are those folds.
 */
export interface OutOfFoldSet {
  readonly task: Task;
  /** Number of classes of a classification task; 1 for regression. */
  readonly classCount: number;
  /** Columns per row of every prediction array. */
  readonly width: number;
  readonly rowCount: number;
  /** Class index per row (classification) or the value (regression). */
  readonly target: Int32Array | Float64Array;
  /** Candidate trials, best first by their mean per-fold score (the board's order). */
  readonly trials: readonly number[];
  /** Per candidate, rowCount × width predictions in dataset row order. */
  readonly predictions: readonly Float32Array[];
  /** Per candidate, the stored score of each outer fold (the board's per-fold numbers). */
  readonly foldScores: readonly Float64Array[];
  /** Outer fold of each row. */
  readonly foldOfRow: Int32Array;
  readonly foldCount: number;
}

/** One trial's stored results on the outer folds, as read from the run store. */
export interface TrialOutOfFold {
  readonly trial: number;
  /** Per outer fold, the predictions of that fold's test rows, in the fold's row order. */
  readonly folds: readonly Float32Array[];
  readonly foldScores: Float64Array;
  /** The board's ranking score: mean of all its stored per-fold scores (every repeat). */
  readonly rankScore: number;
}

/** Candidates best first; equal scores keep the lower trial number first. */
export function rankTrials<T extends { trial: number; rankScore: number }>(trials: readonly T[], direction: "max" | "min"): T[] {
  const sign = direction === "max" ? -1 : 1;
  return [...trials].sort((a, b) => (a.rankScore !== b.rankScore ? sign * (a.rankScore - b.rankScore) : a.trial - b.trial));
}

/** Outer fold of each row from the folds' test rows (which must partition 0..rowCount-1). */
export function foldOfRows(rowCount: number, foldTests: readonly Uint32Array[]): Int32Array {
  const foldOfRow = new Int32Array(rowCount).fill(-1);
  foldTests.forEach((test, fold) => {
    for (let i = 0; i < test.length; i++) foldOfRow[test[i]] = fold;
  });
  const missing = foldOfRow.indexOf(-1);
  if (missing >= 0) throw new RangeError(`row ${missing} is in no outer fold: the folds do not partition the rows`);
  return foldOfRow;
}

/**
 * Assembles the set from per-fold predictions. `trials` must already be in rank order; each
 * needs predictions for every outer fold.
 */
export function assembleOutOfFold(input: {
  task: Task;
  classCount: number;
  width: number;
  target: Int32Array | Float64Array;
  foldTests: readonly Uint32Array[];
  trials: readonly TrialOutOfFold[];
}): OutOfFoldSet {
  const { width, foldTests } = input;
  const rowCount = input.target.length;
  const foldOfRow = foldOfRows(rowCount, foldTests);
  const predictions = input.trials.map((t) => {
    const out = new Float32Array(rowCount * width);
    foldTests.forEach((test, fold) => {
      const part = t.folds[fold];
      if (!part || part.length !== test.length * width)
        throw new RangeError(`trial ${t.trial} has ${part ? part.length : 0} predictions for fold ${fold}, expected ${test.length * width}`);
      for (let j = 0; j < test.length; j++) for (let c = 0; c < width; c++) out[test[j] * width + c] = part[j * width + c];
    });
    return out;
  });
  return {
    task: input.task,
    classCount: input.classCount,
    width,
    rowCount,
    target: input.target,
    trials: input.trials.map((t) => t.trial),
    predictions,
    foldScores: input.trials.map((t) => t.foldScores),
    foldOfRow,
    foldCount: foldTests.length,
  };
}

/** Rows of the given outer fold (`inFold` true) or of every other fold (false), ascending. */
export function rowsOfFold(set: Pick<OutOfFoldSet, "foldOfRow">, fold: number, inFold: boolean): Uint32Array {
  let count = 0;
  for (let i = 0; i < set.foldOfRow.length; i++) if ((set.foldOfRow[i] === fold) === inFold) count++;
  const rows = new Uint32Array(count);
  for (let i = 0, n = 0; i < set.foldOfRow.length; i++) if ((set.foldOfRow[i] === fold) === inFold) rows[n++] = i;
  return rows;
}

/** The target of some rows. */
export function targetRows(target: Int32Array | Float64Array, rows: Uint32Array): Int32Array | Float64Array {
  const out = target instanceof Int32Array ? new Int32Array(rows.length) : new Float64Array(rows.length);
  for (let i = 0; i < rows.length; i++) out[i] = target[rows[i]];
  return out;
}

/** Predictions (row-major, `width` per row) of some rows. */
export function predictionRows<T extends Float32Array | Float64Array>(predictions: T, width: number, rows: Uint32Array): T {
  const out = new (predictions.constructor as new (n: number) => T)(rows.length * width);
  for (let i = 0; i < rows.length; i++) for (let c = 0; c < width; c++) out[i * width + c] = predictions[rows[i] * width + c];
  return out;
}
