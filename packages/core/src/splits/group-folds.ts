import { shuffleInPlace, type Rng } from "../random.js";
import { sortedRows, type FoldAssignment } from "./fold.js";
import { positionsByCode } from "./stratified-folds.js";

/**
 * Group k-fold: all rows of a group go to one fold. Groups are placed largest first, each
 * into the fold with the fewest rows so far (the lowest-numbered on a tie), which keeps
 * fold sizes close; groups of equal size are ordered by a seeded shuffle.
 * `groups` holds the group code of every dataset row.
 */
export function groupFoldAssignment(rows: Uint32Array, groups: Int32Array, k: number, rng: Rng): FoldAssignment {
  const sorted = sortedRows(rows);
  const byGroup = positionsByCode(sorted, groups);
  if (!Number.isInteger(k) || k < 2) throw new RangeError(`k must be an integer of at least 2, got ${k}`);
  if (byGroup.length < k) throw new RangeError(`k = ${k} is more than the ${byGroup.length} groups to split`);
  const order = new Uint32Array(byGroup.length);
  for (let g = 0; g < order.length; g++) order[g] = g;
  shuffleInPlace(order, rng);
  // Array.prototype.sort is stable, so equal sizes keep the shuffled order.
  const placement = Array.from(order).sort((a, b) => byGroup[b].length - byGroup[a].length);
  const size = new Float64Array(k);
  const fold = new Int32Array(sorted.length);
  for (const g of placement) {
    let smallest = 0;
    for (let f = 1; f < k; f++) if (size[f] < size[smallest]) smallest = f;
    const positions = byGroup[g];
    for (let i = 0; i < positions.length; i++) fold[positions[i]] = smallest;
    size[smallest] += positions.length;
  }
  return { rows: sorted, fold, k };
}
