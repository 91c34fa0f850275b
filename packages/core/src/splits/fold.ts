/** One cross-validation fold: fit on `train`, predict `test`. Row indices are sorted ascending. */
export interface Fold {
  readonly repeat: number;
  readonly index: number;
  readonly train: Uint32Array;
  readonly test: Uint32Array;
}

/** How a run splits its non-holdout rows into folds. */
export interface FoldSpec {
  k: number;
  repeats: number;
  /** Keep class proportions in every fold (classification only; ignored for regression). */
  stratify: boolean;
  /** A column whose groups never straddle folds (takes precedence over stratify). */
  group?: string;
}

/**
 * Which fold each row is in: `rows` sorted ascending, and `fold[i]` the fold of `rows[i]`.
 * The splitting methods produce these; `foldsOf` turns one into folds.
 */
export interface FoldAssignment {
  readonly rows: Uint32Array;
  readonly fold: Int32Array;
  readonly k: number;
}

/** The k folds of an assignment: fold f tests the rows assigned to f and trains on all others. */
export function foldsOf(assignment: FoldAssignment, repeat: number): Fold[] {
  const { rows, fold, k } = assignment;
  const testSize = new Int32Array(k);
  for (let i = 0; i < fold.length; i++) testSize[fold[i]]++;
  const folds: Fold[] = [];
  for (let f = 0; f < k; f++) {
    const test = new Uint32Array(testSize[f]);
    const train = new Uint32Array(rows.length - testSize[f]);
    let t = 0;
    let r = 0;
    for (let i = 0; i < rows.length; i++) {
      if (fold[i] === f) test[t++] = rows[i];
      else train[r++] = rows[i];
    }
    folds.push({ repeat, index: f, train, test });
  }
  return folds;
}

/** A sorted copy, so a split depends on the set of rows and not on the order they were given in. */
export function sortedRows(rows: Uint32Array): Uint32Array {
  return Uint32Array.from(rows).sort();
}

/**
 * Deals `positions` (already shuffled) over the folds in turn starting at fold `start`;
 * returns the fold after the last one dealt, so the next deal continues the cycle.
 */
export function dealPositions(positions: Uint32Array, fold: Int32Array, k: number, start: number): number {
  let f = start;
  for (let i = 0; i < positions.length; i++) {
    fold[positions[i]] = f;
    f = f + 1 === k ? 0 : f + 1;
  }
  return f;
}
