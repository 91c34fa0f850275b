import { shuffleInPlace, type Rng } from "../random.js";
import { dealPositions, sortedRows, type FoldAssignment } from "./fold.js";
import { checkK } from "./k-fold.js";

/**
 * Stratified k-fold: each class's rows in a seeded random order, dealt over the folds in
 * turn, the deal continuing from class to class. Every fold then holds each class's count
 * divided by k, give or take one, and fold sizes differ by at most one overall.
 * `classes` holds the class code of every dataset row (indexed by row, not by position).
 */
export function stratifiedFoldAssignment(rows: Uint32Array, classes: Int32Array, k: number, rng: Rng): FoldAssignment {
  checkK(k, rows.length);
  const sorted = sortedRows(rows);
  const byClass = positionsByCode(sorted, classes);
  const fold = new Int32Array(sorted.length);
  let next = 0;
  for (const positions of byClass) next = dealPositions(shuffleInPlace(positions, rng), fold, k, next);
  return { rows: sorted, fold, k };
}

/** Positions of `rows` grouped by `codes[row]`, classes in ascending code order, positions ascending. */
export function positionsByCode(rows: Uint32Array, codes: Int32Array): Uint32Array[] {
  let maxCode = -1;
  for (let i = 0; i < rows.length; i++) if (codes[rows[i]] > maxCode) maxCode = codes[rows[i]];
  const counts = new Int32Array(maxCode + 1);
  for (let i = 0; i < rows.length; i++) counts[codes[rows[i]]]++;
  const groups = Array.from(counts, (count) => new Uint32Array(count));
  const filled = new Int32Array(maxCode + 1);
  for (let i = 0; i < rows.length; i++) {
    const code = codes[rows[i]];
    groups[code][filled[code]++] = i;
  }
  return groups.filter((positions) => positions.length > 0);
}
