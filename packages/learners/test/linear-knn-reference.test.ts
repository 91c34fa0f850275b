import { readFileSync } from "node:fs";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import type { NumericColumn, TableView, TrainView } from "@nightshift/core";
import { describe, expect, it } from "vitest";
import { knnLearner, logisticLearner, type LinearModel } from "../src/index.js";
import { averagePrecision, column } from "./linear-knn-fixtures.js";

/**
 * Checks against scikit-learn 1.2.1: every expected value below was computed by
 * test/reference/linear_knn_reference.py (versions recorded in linear_knn_reference.json) on
 * the same rows and the same 5-fold assignment.
 */
const here = join(dirname(fileURLToPath(import.meta.url)), "reference");
const reference = JSON.parse(readFileSync(join(here, "linear_knn_reference.json"), "utf8")) as Reference;

interface LogisticCase {
  l2: number;
  class_weight: "none" | "balanced";
  fold: number;
  coef: number[][];
  intercept: number[];
  newton_cg: { coef: number[][]; intercept: number[]; test_proba: number[][] };
  lbfgs_vs_newton_cg_max_coef_difference: number;
  test_proba: number[][];
  test_ap?: number;
}
interface Reference {
  versions: Record<string, string>;
  data: Record<"breast_cancer" | "wine" | "friedman1", { file: string; folds: number[] }>;
  logistic_breast_cancer: LogisticCase[];
  softmax_wine: LogisticCase[];
  knn_breast_cancer: Array<{ k: number; weights: "uniform" | "distance"; fold: number; test_proba: number[][]; test_ap: number }>;
  ridge_friedman1: Array<{ l2: number; fold: number; coef: number[]; intercept: number; test_predictions: number[]; test_rmse: number }>;
}

/** Our own small CSV (numbers only, header first), written by the reference script. */
function readTable(name: "breast_cancer" | "wine" | "friedman1") {
  const lines = readFileSync(join(here, reference.data[name].file), "utf8").trim().split("\n");
  const header = lines[0].split(",");
  const cells = lines.slice(1).map((line) => line.split(",").map(Number));
  const columns: NumericColumn[] = header.slice(0, -1).map((h, j) => ({ name: h, kind: "numeric", values: Float64Array.from(cells, (row) => row[j]) }));
  const target = cells.map((row) => row[row.length - 1]);
  const folds = reference.data[name].folds;
  const split = (fold: number) => ({
    train: Uint32Array.from(folds.flatMap((f, i) => (f === fold ? [] : [i]))),
    test: Uint32Array.from(folds.flatMap((f, i) => (f === fold ? [i] : []))),
  });
  return { columns, target, split };
}

function classTable(name: "breast_cancer" | "wine", labels: string[]) {
  const { columns, target, split } = readTable(name);
  const codes = Int32Array.from(target);
  const view = (fold: number): { train: TrainView; test: TableView; testCodes: number[] } => {
    const { train, test } = split(fold);
    return {
      train: { columns, rows: train, task: labels.length === 2 ? "binary" : "multiclass", target: { name: "target", kind: "classes", labels, codes } },
      test: { columns, rows: test },
      testCodes: Array.from(test, (r) => codes[r]),
    };
  };
  return view;
}

const maxDifference = (a: ArrayLike<number>, b: ArrayLike<number>) => {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i] - b[i]));
  return m;
};

/** Our coefficients as scikit-learn's coef_ (rows of classes; one row for binary). */
const coefficients = (model: LinearModel) => Array.from(model.weights);

describe("logistic family against scikit-learn's LogisticRegression", () => {
  const cancer = classTable("breast_cancer", ["0", "1"]);
  const wine = classTable("wine", ["0", "1", "2"]);
  for (const [name, cases, view] of [
    ["breast cancer (binary)", reference.logistic_breast_cancer, cancer],
    ["wine (softmax)", reference.softmax_wine, wine],
  ] as const) {
    it(`solves the same problem on ${name}: coefficients and held-out probabilities`, () => {
      for (const c of cases) {
        const { train, test, testCodes } = view(c.fold);
        const params = logisticLearner.params.parse({ l2: c.l2, class_weight: c.class_weight, tolerance: 1e-8, max_iterations: 10_000 });
        const model = logisticLearner.fit(train, params, { next: () => 0, int: () => 0, normal: () => 0 });
        expect(model.optimisation?.converged).toBe(true);
        // scikit-learn's lbfgs also stops on a relative decrease of the objective, so its coefficients
        // are as far from the optimum as the script's Newton-CG solution shows; ours match Newton-CG tightly.
        expect(maxDifference(coefficients(model), c.newton_cg.coef.flat())).toBeLessThan(2e-5);
        expect(maxDifference(coefficients(model), c.coef.flat())).toBeLessThan(c.lbfgs_vs_newton_cg_max_coef_difference + 2e-5);
        expect(maxDifference(model.intercepts, c.newton_cg.intercept)).toBeLessThan(2e-5);
        const probabilities = logisticLearner.predict(model, test);
        expect(maxDifference(probabilities, c.newton_cg.test_proba.flat())).toBeLessThan(1e-5);
        expect(maxDifference(probabilities, c.test_proba.flat())).toBeLessThan(c.l2 >= 1 ? 1e-4 : 1e-3);
        if (c.test_ap !== undefined)
          expect(averagePrecision(testCodes.map((y) => y === 1), column(probabilities, 2, 1))).toBeCloseTo(c.test_ap, 4);
      }
    });
  }
});

describe("logistic family on regression against scikit-learn's Ridge", () => {
  const { columns, target, split } = readTable("friedman1");
  it("predicts the held-out rows of make_friedman1 as Ridge(alpha = l2) on standardised features", () => {
    for (const c of reference.ridge_friedman1) {
      const { train, test } = split(c.fold);
      const view: TrainView = { columns, rows: train, task: "regression", target: { name: "target", kind: "values", values: Float64Array.from(target) } };
      const model = logisticLearner.fit(view, logisticLearner.params.parse({ l2: c.l2 }), { next: () => 0, int: () => 0, normal: () => 0 });
      expect(maxDifference(model.weights, c.coef)).toBeLessThan(1e-9);
      const predicted = logisticLearner.predict(model, { columns, rows: test });
      expect(maxDifference(predicted, c.test_predictions)).toBeLessThan(1e-8);
    }
  });
});

describe("knn family against scikit-learn's KNeighborsClassifier (brute force)", () => {
  const cancer = classTable("breast_cancer", ["0", "1"]);
  it("gives the same held-out probabilities on breast cancer, k = 15, uniform and distance weights", () => {
    for (const c of reference.knn_breast_cancer) {
      const { train, test } = cancer(c.fold);
      const model = knnLearner.fit(train, knnLearner.params.parse({ k: c.k, weights: c.weights }), { next: () => 0, int: () => 0, normal: () => 0 });
      const probabilities = knnLearner.predict(model, test);
      // Uniform: vote counts / 15, exactly. Distance: 1/d sums differ only by how each library rounds d.
      if (c.weights === "uniform") expect(Array.from(probabilities)).toEqual(c.test_proba.flat());
      else expect(maxDifference(probabilities, c.test_proba.flat())).toBeLessThan(1e-12);
    }
  });
});
