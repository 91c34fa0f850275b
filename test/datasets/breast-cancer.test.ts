import { fileURLToPath } from "node:url";
import { describe, expect, it } from "vitest";
import { readCsvDataset } from "../../packages/core/src/csv/read-csv.js";
import { allRows } from "../../packages/core/src/frame.js";
import { planFolds } from "../../packages/core/src/splits/plan-folds.js";

/**
 * UCI Breast Cancer Wisconsin (Diagnostic), scikit-learn 1.2.1's copy as shipped in Debian's
 * python3-sklearn, converted by test/fixtures/make-breast-cancer-csv.py (see test/fixtures/README.md).
 * Published figures: scikit-learn 1.2.1 sklearn/datasets/descr/breast_cancer.rst —
 * "Number of Instances: 569", "30 numeric, predictive attributes and the class",
 * "Missing Attribute Values: None", "Class Distribution: 212 - Malignant, 357 - Benign".
 */
const path = fileURLToPath(new URL("../fixtures/breast-cancer-wisconsin.csv", import.meta.url));

describe("Breast Cancer Wisconsin (Diagnostic)", () => {
  it("has the published shape, classes and no missing values", async () => {
    const dataset = await readCsvDataset(path, { target: "diagnosis" });
    expect(dataset.rowCount).toBe(569);
    expect(dataset.features).toHaveLength(30);
    expect(dataset.features.every((column) => column.kind === "numeric")).toBe(true);
    expect(dataset.task).toBe("binary");
    if (dataset.target.kind !== "classes") throw new Error("diagnosis must be classes");
    const { codes, labels } = dataset.target;
    expect(labels).toEqual(["benign", "malignant"]);
    expect([codes.filter((c) => c === 1).length, codes.filter((c) => c === 0).length]).toEqual([212, 357]);
    for (const column of dataset.features) {
      if (column.kind === "categorical") throw new Error("numeric expected");
      expect(column.values.some(Number.isNaN)).toBe(false);
    }
    // descr "Summary Statistics": radius (mean) min 6.981, max 28.11.
    const radius = dataset.features.find((column) => column.name === "mean radius");
    if (radius === undefined || radius.kind === "categorical") throw new Error("mean radius missing");
    expect(Math.min(...radius.values)).toBeCloseTo(6.981, 3);
    expect(Math.max(...radius.values)).toBeCloseTo(28.11, 2);
  });

  it("splits into stratified folds holding the class ratio", async () => {
    const dataset = await readCsvDataset(path, { target: "diagnosis" });
    if (dataset.target.kind !== "classes") throw new Error("diagnosis must be classes");
    const codes = dataset.target.codes;
    for (const fold of planFolds(dataset, allRows(dataset.rowCount), { k: 5, repeats: 1, stratify: true }, 2024)) {
      const malignant = Array.from(fold.test).filter((row) => codes[row] === 1).length;
      expect(Math.abs(malignant - 212 / 5)).toBeLessThan(1);
    }
  });
});
