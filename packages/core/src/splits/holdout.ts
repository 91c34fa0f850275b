import type { Dataset } from "../dataset/dataset.js";
import { InputError } from "../errors.js";
import { allRows } from "../frame.js";
import { createRng, shuffleInPlace, type Rng } from "../random.js";
import { sortedRows } from "./fold.js";
import { positionsByCode } from "./stratified-folds.js";

/** Rows kept for the search and rows sealed for the final check, both sorted ascending. */
export interface HoldoutSplit {
  train: Uint32Array;
  holdout: Uint32Array;
}

/**
 * Seals a fraction of the dataset's rows as the hold-out, from the stream (seed, "holdout").
 * Classification: stratified (each class gives round(fraction × its count) rows), so the
 * hold-out keeps the class proportions; regression: a plain random sample. With a group
 * column, whole groups are sealed so no group is on both sides. Fraction 0 seals nothing.
 */
export function holdoutSplit(dataset: Dataset, fraction: number, seed: number | string): HoldoutSplit {
  if (!(fraction >= 0 && fraction < 1)) {
    throw new InputError(`${dataset.source}: data.holdout`, `the hold-out fraction must be at least 0 and below 1, got ${fraction}`);
  }
  const rows = allRows(dataset.rowCount);
  if (fraction === 0) return { train: rows, holdout: new Uint32Array(0) };
  const rng = createRng(seed, "holdout");
  if (dataset.groups !== undefined) return groupHoldout(rows, dataset.groups, fraction, rng);
  return stratifiedHoldout(rows, dataset.target.kind === "classes" ? dataset.target.codes : null, fraction, rng);
}

/** Stratified hold-out sample of `rows` (`classes` per dataset row), or a plain one when `classes` is null. */
export function stratifiedHoldout(rows: Uint32Array, classes: Int32Array | null, fraction: number, rng: Rng): HoldoutSplit {
  const sorted = sortedRows(rows);
  const sealed = new Uint8Array(sorted.length);
  const strata = classes === null ? [Uint32Array.from(sorted.keys())] : positionsByCode(sorted, classes);
  for (const positions of strata) {
    shuffleInPlace(positions, rng);
    const take = Math.round(fraction * positions.length);
    for (let i = 0; i < take; i++) sealed[positions[i]] = 1;
  }
  return splitBy(sorted, sealed);
}

/** Seals whole groups, in a seeded random order, until about `fraction` of the rows; never every group. */
export function groupHoldout(rows: Uint32Array, groups: Int32Array, fraction: number, rng: Rng): HoldoutSplit {
  const sorted = sortedRows(rows);
  const byGroup = positionsByCode(sorted, groups);
  const order = shuffleInPlace(Uint32Array.from(byGroup.keys()), rng);
  const sealed = new Uint8Array(sorted.length);
  const wanted = Math.round(fraction * sorted.length);
  let taken = 0;
  for (let i = 0; i < order.length - 1 && taken < wanted; i++) {
    const positions = byGroup[order[i]];
    for (let p = 0; p < positions.length; p++) sealed[positions[p]] = 1;
    taken += positions.length;
  }
  return splitBy(sorted, sealed);
}

function splitBy(sorted: Uint32Array, sealed: Uint8Array): HoldoutSplit {
  let count = 0;
  for (let i = 0; i < sealed.length; i++) count += sealed[i];
  const holdout = new Uint32Array(count);
  const train = new Uint32Array(sorted.length - count);
  let h = 0;
  let t = 0;
  for (let i = 0; i < sorted.length; i++) {
    if (sealed[i] === 1) holdout[h++] = sorted[i];
    else train[t++] = sorted[i];
  }
  return { train, holdout };
}
