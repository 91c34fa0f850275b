import { describe, expect, it } from "vitest";
import type { Dataset } from "../src/dataset/dataset.js";
import { allRows, type ClassTarget } from "../src/frame.js";
import { createRng } from "../src/random.js";
import type { Fold } from "../src/splits/fold.js";
import { groupFoldAssignment } from "../src/splits/group-folds.js";
import { holdoutSplit } from "../src/splits/holdout.js";
import { kFoldAssignment } from "../src/splits/k-fold.js";
import { planFolds } from "../src/splits/plan-folds.js";

/** A classification dataset with the given class per row (features are irrelevant to splitting). */
function classDataset(classes: number[], groups?: number[]): Dataset {
  const labels = Array.from({ length: Math.max(...classes) + 1 }, (_, c) => `class${c}`);
  const target: ClassTarget = { name: "y", kind: "classes", codes: Int32Array.from(classes), labels };
  return {
    source: "folds.csv",
    task: labels.length === 2 ? "binary" : "multiclass",
    features: [],
    target,
    ...(groups !== undefined ? { groups: Int32Array.from(groups), groupColumn: "site" } : {}),
    rowCount: classes.length,
    droppedRows: 0,
    fingerprint: "",
  };
}

const rng = createRng(7);
// 3 imbalanced classes: 61, 23 and 9 rows, in a scrambled order.
const CLASSES = Array.from({ length: 93 }, (_, i) => ((i * 37) % 93 < 61 ? 0 : (i * 37) % 93 < 84 ? 1 : 2));
const sorted = (rows: Uint32Array): boolean => rows.every((row, i) => i === 0 || rows[i - 1] < row);

function expectPartition(folds: Fold[], rows: Uint32Array): void {
  const seen = new Map<number, number>();
  for (const fold of folds) {
    expect(sorted(fold.test)).toBe(true);
    expect(sorted(fold.train)).toBe(true);
    for (const row of fold.test) seen.set(row, (seen.get(row) ?? 0) + 1);
    const test = new Set(fold.test);
    expect(Array.from(fold.train)).toEqual(Array.from(rows).filter((row) => !test.has(row)).sort((a, b) => a - b));
  }
  expect([...seen.keys()].sort((a, b) => a - b)).toEqual(Array.from(rows).sort((a, b) => a - b));
  expect([...seen.values()].every((count) => count === 1)).toBe(true);
}

describe("k-fold splits", () => {
  it("put every row in exactly one test fold and train on the complement", () => {
    const dataset = classDataset(CLASSES);
    const rows = Uint32Array.from(allRows(93).filter((row) => row % 10 !== 3));
    for (const spec of [
      { k: 5, repeats: 1, stratify: true },
      { k: 4, repeats: 1, stratify: false },
    ]) {
      const folds = planFolds(dataset, rows, spec, 11);
      expect(folds).toHaveLength(spec.k);
      expectPartition(folds, rows);
    }
  });

  it("keep plain fold sizes within one row", () => {
    const sizes = Array.from({ length: 7 }, () => 0);
    const { fold } = kFoldAssignment(allRows(100), 7, rng);
    fold.forEach((f) => sizes[f]++);
    expect(Math.max(...sizes) - Math.min(...sizes)).toBeLessThanOrEqual(1);
  });

  it("stratify: every class is spread over the folds within one row of its share", () => {
    const dataset = classDataset(CLASSES);
    const k = 5;
    const folds = planFolds(dataset, allRows(93), { k, repeats: 1, stratify: true }, "strata");
    for (let c = 0; c < 3; c++) {
      const total = CLASSES.filter((code) => code === c).length;
      for (const fold of folds) {
        const inFold = Array.from(fold.test).filter((row) => CLASSES[row] === c).length;
        expect(Math.abs(inFold - total / k)).toBeLessThan(1);
      }
    }
    const sizes = folds.map((fold) => fold.test.length);
    expect(Math.max(...sizes) - Math.min(...sizes)).toBeLessThanOrEqual(1);
  });

  it("group: a group never straddles folds, and folds stay balanced", () => {
    // 30 groups of sizes 1..30 (465 rows), rows of a group scattered through the file.
    const groups: number[] = [];
    for (let g = 0; g < 30; g++) for (let i = 0; i <= g; i++) groups.push(g);
    const scattered = groups.map((_, i) => groups[(i * 101) % groups.length]);
    const dataset = classDataset(scattered.map((g) => g % 2), scattered);
    const folds = planFolds(dataset, allRows(scattered.length), { k: 5, repeats: 2, stratify: true, group: "site" }, 3);
    expect(folds).toHaveLength(10);
    for (const repeat of [0, 1]) {
      const ofRepeat = folds.filter((fold) => fold.repeat === repeat);
      expectPartition(ofRepeat, allRows(scattered.length));
      const foldOfGroup = new Map<number, number>();
      for (const fold of ofRepeat) {
        for (const row of fold.test) {
          const group = scattered[row];
          expect(foldOfGroup.get(group) ?? fold.index).toBe(fold.index);
          foldOfGroup.set(group, fold.index);
        }
      }
      const sizes = ofRepeat.map((fold) => fold.test.length);
      // Largest-first greedy placement: the size gap is at most the largest group (30 rows).
      expect(Math.max(...sizes) - Math.min(...sizes)).toBeLessThanOrEqual(30);
    }
  });

  it("group: equal-sized groups are ordered by the seed", () => {
    const groups = Int32Array.from({ length: 40 }, (_, i) => i >> 2); // 10 groups of 4
    const a = groupFoldAssignment(allRows(40), groups, 5, createRng(1, "folds", 0));
    const b = groupFoldAssignment(allRows(40), groups, 5, createRng(2, "folds", 0));
    expect(Array.from(a.fold)).not.toEqual(Array.from(b.fold));
  });

  it("are deterministic: the same seed gives the same folds, another seed other folds", () => {
    const dataset = classDataset(CLASSES);
    const spec = { k: 5, repeats: 3, stratify: true };
    const folds = planFolds(dataset, allRows(93), spec, 42);
    expect(planFolds(dataset, allRows(93), spec, 42)).toEqual(folds);
    expect(planFolds(dataset, allRows(93), spec, 43)[0].test).not.toEqual(folds[0].test);
    // Repeats draw from their own streams.
    expect(folds[5].test).not.toEqual(folds[0].test);
    expect(folds.map((fold) => `${fold.repeat}/${fold.index}`).slice(4, 6)).toEqual(["0/4", "1/0"]);
    // The order in which rows are given does not matter.
    expect(planFolds(dataset, allRows(93).reverse(), spec, 42)).toEqual(folds);
  });
});

describe("hold-out split", () => {
  it("seals about the fraction, stratified by class, disjoint from the rest", () => {
    const dataset = classDataset(CLASSES);
    const { train, holdout } = holdoutSplit(dataset, 0.2, 5);
    expect(sorted(train) && sorted(holdout)).toBe(true);
    expect(train.length + holdout.length).toBe(93);
    expect(new Set([...train, ...holdout]).size).toBe(93);
    // Math.round(0.2 × class count) per class: 12 of 61, 5 of 23, 2 of 9.
    const perClass = [0, 1, 2].map((c) => Array.from(holdout).filter((row) => CLASSES[row] === c).length);
    expect(perClass).toEqual([12, 5, 2]);
    expect(holdoutSplit(dataset, 0.2, 5)).toEqual({ train, holdout });
    expect(holdoutSplit(dataset, 0.2, 6).holdout).not.toEqual(holdout);
  });

  it("seals nothing for fraction 0 and refuses fractions outside [0, 1)", () => {
    const dataset = classDataset(CLASSES);
    const { train, holdout } = holdoutSplit(dataset, 0, 5);
    expect(holdout.length).toBe(0);
    expect(train.length).toBe(93);
    expect(() => holdoutSplit(dataset, 1, 5)).toThrow(/folds\.csv: data\.holdout/);
  });

  it("samples regression rows plainly, and seals whole groups when there is a group column", () => {
    const regression: Dataset = { ...classDataset(CLASSES), task: "regression", target: { name: "y", kind: "values", values: new Float64Array(93) } };
    expect(holdoutSplit(regression, 0.25, 1).holdout.length).toBe(Math.round(0.25 * 93));
    const groups = CLASSES.map((_, i) => i % 10);
    const grouped = classDataset(CLASSES, groups);
    const { train, holdout } = holdoutSplit(grouped, 0.3, 1);
    const sealedGroups = new Set(Array.from(holdout, (row) => groups[row]));
    expect(Array.from(train).some((row) => sealedGroups.has(groups[row]))).toBe(false);
    expect(holdout.length).toBeGreaterThanOrEqual(Math.round(0.3 * 93));
  });
});
