import type { Dataset } from "../dataset/dataset.js";
import { InputError } from "../errors.js";
import { createRng } from "../random.js";
import { foldsOf, type Fold, type FoldAssignment, type FoldSpec } from "./fold.js";
import { groupFoldAssignment } from "./group-folds.js";
import { kFoldAssignment } from "./k-fold.js";
import { positionsByCode, stratifiedFoldAssignment } from "./stratified-folds.js";

/**
 * The run's folds over `rows` (the non-holdout rows): k folds per repeat, repeat r drawn
 * from the stream (seed, "folds", r). A group column gives group k-fold; otherwise
 * classification with `stratify` gives stratified k-fold, anything else plain k-fold.
 * Every fold's rows are sorted ascending; each row is in exactly one test fold per repeat.
 */
export function planFolds(dataset: Dataset, rows: Uint32Array, spec: FoldSpec, seed: number | string): Fold[] {
  const where = `${dataset.source}: folds`;
  const { k, repeats } = spec;
  if (!Number.isInteger(k) || k < 2) throw new InputError(`${where}.k`, `k must be an integer of at least 2, got ${k}`);
  if (!Number.isInteger(repeats) || repeats < 1) throw new InputError(`${where}.repeats`, `repeats must be an integer of at least 1, got ${repeats}`);
  if (k > rows.length) throw new InputError(`${where}.k`, `k = ${k} is more than the ${rows.length} rows to split`);

  let assign: (repeat: number) => FoldAssignment;
  if (spec.group !== undefined) {
    const groups = dataset.groups;
    if (groups === undefined || dataset.groupColumn !== spec.group) {
      throw new InputError(
        `${where}.group`,
        `the dataset was read ${dataset.groupColumn === undefined ? "without a group column" : `with group column "${dataset.groupColumn}"`}, not "${spec.group}"`,
      );
    }
    const groupCount = positionsByCode(rows, groups).length;
    if (groupCount < k) {
      throw new InputError(`${where}.k`, `k = ${k} is more than the ${groupCount} groups of column "${spec.group}"; lower k`);
    }
    assign = (repeat) => groupFoldAssignment(rows, groups, k, createRng(seed, "folds", repeat));
  } else if (spec.stratify && dataset.target.kind === "classes") {
    const target = dataset.target;
    const smallest = positionsByCode(rows, target.codes).reduce((a, b) => (b.length < a.length ? b : a));
    if (smallest.length < k) {
      const label = target.labels[target.codes[rows[smallest[0]]]];
      throw new InputError(
        `${where}.k`,
        `k = ${k} is more than the ${smallest.length} rows of class ${JSON.stringify(label)} in column "${target.name}", so some fold would have none; lower k or merge rare classes`,
      );
    }
    assign = (repeat) => stratifiedFoldAssignment(rows, target.codes, k, createRng(seed, "folds", repeat));
  } else {
    assign = (repeat) => kFoldAssignment(rows, k, createRng(seed, "folds", repeat));
  }
  const folds: Fold[] = [];
  for (let repeat = 0; repeat < repeats; repeat++) folds.push(...foldsOf(assign(repeat), repeat));
  return folds;
}
