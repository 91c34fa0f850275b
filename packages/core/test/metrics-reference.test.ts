import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import {
  calibrationBins,
  type CalibrationStrategy,
  expectedCalibrationError,
  METRICS,
  type MetricName,
  precisionRecallAtThreshold,
  precisionRecallCurve,
  rocCurve,
} from "../src/metrics/index.js";

/*
 * Every metric against values computed by test/reference/metrics_reference.py with Debian's
 * scikit-learn (version recorded in the JSON; 1.2.1 when written). Inputs are seeded random
 * cases with many tied scores, small and large, balanced and imbalanced.
 */
interface CalibrationReference {
  strategy: CalibrationStrategy;
  bins: number;
  fraction_positive: number[];
  mean_predicted: number[];
  count: number[];
  ece_numpy: number;
}

interface ReferenceCase {
  task: "binary" | "multiclass" | "regression";
  classes?: number;
  y: number[];
  p: number[];
  pr_curve?: { precision: number[]; recall: number[]; thresholds: number[] };
  roc_curve?: { fpr: number[]; tpr: number[]; thresholds_after_first: number[] };
  calibration?: CalibrationReference[];
  [metric: string]: unknown;
}

interface Reference {
  versions: Record<string, string>;
  cases: ReferenceCase[];
}

const reference = JSON.parse(
  readFileSync(new URL("../../../test/reference/metrics_reference.json", import.meta.url), "utf8"),
) as Reference;
const source = `computed by test/reference/metrics_reference.py with scikit-learn ${reference.versions.sklearn}`;

/** Within 1e-9, relative to the magnitude when it exceeds 1. */
function expectClose(actual: number, expected: number, what: string): void {
  const tolerance = 1e-9 * Math.max(1, Math.abs(expected));
  if (!(Math.abs(actual - expected) <= tolerance)) {
    throw new Error(`${what}: got ${actual}, expected ${expected} (${source})`);
  }
}

function expectAllClose(actual: ArrayLike<number>, expected: number[], what: string): void {
  expect(actual.length, what).toBe(expected.length);
  for (let i = 0; i < expected.length; i++) expectClose(actual[i], expected[i], `${what}[${i}]`);
}

function inputs(c: ReferenceCase): { y: Int32Array | Float64Array; predictions: Float64Array; width: number } {
  if (c.task === "regression") return { y: Float64Array.from(c.y), predictions: Float64Array.from(c.p), width: 1 };
  if (c.task === "multiclass") return { y: Int32Array.from(c.y), predictions: Float64Array.from(c.p), width: c.classes ?? 0 };
  const predictions = new Float64Array(2 * c.p.length);
  c.p.forEach((p, i) => {
    predictions[2 * i] = 1 - p;
    predictions[2 * i + 1] = p;
  });
  return { y: Int32Array.from(c.y), predictions, width: 2 };
}

const classificationMetrics: [MetricName, string][] = [
  ["average_precision", "average_precision"],
  ["roc_auc", "roc_auc"],
  ["log_loss", "log_loss"],
  ["accuracy", "accuracy"],
  ["balanced_accuracy", "balanced_accuracy"],
  ["f1", "f1"],
  ["mcc", "mcc"],
];

describe(`metrics against scikit-learn reference values (${source})`, () => {
  it("covers thousands of rows in binary, multiclass and regression cases", () => {
    const tasks = new Set(reference.cases.map((c) => c.task));
    expect([...tasks].sort()).toEqual(["binary", "multiclass", "regression"]);
    expect(reference.cases.reduce((rows, c) => rows + c.y.length, 0)).toBeGreaterThan(10_000);
  });

  it("matches every classification metric to 1e-9", () => {
    let checked = 0;
    reference.cases.forEach((c, index) => {
      if (c.task === "regression") return;
      const { y, predictions, width } = inputs(c);
      for (const [name, key] of classificationMetrics) {
        expectClose(METRICS[name].score(y, predictions, width), c[key] as number, `case ${index} ${name}`);
        checked++;
      }
      const brier = (c.task === "binary" ? c.brier : c.brier_numpy) as number;
      expectClose(METRICS.brier.score(y, predictions, width), brier, `case ${index} brier`);
    });
    expect(checked).toBeGreaterThan(2000);
  });

  it("matches every regression metric to 1e-9 (relative for large values)", () => {
    reference.cases.forEach((c, index) => {
      if (c.task !== "regression") return;
      const { y, predictions } = inputs(c);
      for (const name of ["rmse", "mae", "r2"] as const) {
        expectClose(METRICS[name].score(y, predictions, 1), c[name] as number, `case ${index} ${name}`);
      }
    });
  });

  it("matches precision_recall_curve, roc_curve and precision/recall at 0.5 point for point", () => {
    let curves = 0;
    reference.cases.forEach((c, index) => {
      if (c.task !== "binary") return;
      const positive = Uint8Array.from(c.y);
      const scores = Float64Array.from(c.p);
      const at = precisionRecallAtThreshold(positive, scores, 0.5);
      expectClose(at.precision, c.precision_at_half as number, `case ${index} precision at 0.5`);
      expectClose(at.recall, c.recall_at_half as number, `case ${index} recall at 0.5`);
      if (c.pr_curve === undefined || c.roc_curve === undefined) return;
      const pr = precisionRecallCurve(positive, scores);
      expectAllClose(pr.precision, c.pr_curve.precision, `case ${index} PR precision`);
      expectAllClose(pr.recall, c.pr_curve.recall, `case ${index} PR recall`);
      expectAllClose(pr.thresholds, c.pr_curve.thresholds, `case ${index} PR thresholds`);
      const roc = rocCurve(positive, scores);
      expectAllClose(roc.falsePositiveRate, c.roc_curve.fpr, `case ${index} ROC fpr`);
      expectAllClose(roc.truePositiveRate, c.roc_curve.tpr, `case ${index} ROC tpr`);
      expect(roc.thresholds[0]).toBe(Infinity);
      expectAllClose(roc.thresholds.subarray(1), c.roc_curve.thresholds_after_first, `case ${index} ROC thresholds`);
      curves++;
    });
    expect(curves).toBeGreaterThan(100);
  });

  it("matches calibration_curve bins (both strategies) and the expected calibration error", () => {
    reference.cases.forEach((c, index) => {
      for (const expected of c.calibration ?? []) {
        const what = `case ${index} ${expected.strategy} ${expected.bins} bins`;
        const bins = calibrationBins(Uint8Array.from(c.y), Float64Array.from(c.p), expected.bins, expected.strategy);
        expectAllClose(bins.fractionPositive, expected.fraction_positive, `${what} fraction positive`);
        expectAllClose(bins.meanPredicted, expected.mean_predicted, `${what} mean predicted`);
        expect(Array.from(bins.count), what).toEqual(expected.count);
        expectClose(expectedCalibrationError(bins), expected.ece_numpy, `${what} ECE`);
      }
    });
  });
});
