import { shuffleInPlace, type Rng } from "../random.js";
import { dealPositions, sortedRows, type FoldAssignment } from "./fold.js";

/** Plain k-fold: the rows in a seeded random order, dealt over k folds (sizes differ by at most 1). */
export function kFoldAssignment(rows: Uint32Array, k: number, rng: Rng): FoldAssignment {
  checkK(k, rows.length);
  const sorted = sortedRows(rows);
  const positions = new Uint32Array(sorted.length);
  for (let i = 0; i < positions.length; i++) positions[i] = i;
  shuffleInPlace(positions, rng);
  const fold = new Int32Array(sorted.length);
  dealPositions(positions, fold, k, 0);
  return { rows: sorted, fold, k };
}

export function checkK(k: number, rowCount: number): void {
  if (!Number.isInteger(k) || k < 2) throw new RangeError(`k must be an integer of at least 2, got ${k}`);
  if (k > rowCount) throw new RangeError(`k = ${k} is more than the ${rowCount} rows to split`);
}
