import { describe, expect, it } from "vitest";
import { isBetter, METRIC_NAMES, METRICS, metricByName } from "../src/metrics/index.js";

describe("metric registry", () => {
  it("names every metric once, with its direction and tasks", () => {
    expect([...METRIC_NAMES].sort()).toEqual(
      ["accuracy", "average_precision", "balanced_accuracy", "brier", "f1", "log_loss", "mae", "mcc", "r2", "rmse", "roc_auc"],
    );
    for (const name of METRIC_NAMES) expect(METRICS[name].name).toBe(name);
    const losses = METRIC_NAMES.filter((name) => METRICS[name].direction === "min").sort();
    expect(losses).toEqual(["brier", "log_loss", "mae", "rmse"]);
    expect(METRICS.r2.tasks).toEqual(["regression"]);
    expect(METRICS.average_precision.tasks).toEqual(["binary", "multiclass"]);
  });

  it("finds a metric by name and lists the valid names for an unknown one", () => {
    expect(metricByName("roc_auc")).toBe(METRICS.roc_auc);
    expect(() => metricByName("auc")).toThrow(RangeError);
    expect(() => metricByName("auc")).toThrow(/unknown metric "auc".*average_precision.*r2/);
    expect(() => metricByName("toString")).toThrow(RangeError);
  });

  it("compares scores by direction, a defined score beating an undefined one", () => {
    expect(isBetter(METRICS.roc_auc, 0.8, 0.7)).toBe(true);
    expect(isBetter(METRICS.roc_auc, 0.7, 0.7)).toBe(false);
    expect(isBetter(METRICS.log_loss, 0.3, 0.4)).toBe(true);
    expect(isBetter(METRICS.log_loss, 0.4, 0.3)).toBe(false);
    expect(isBetter(METRICS.roc_auc, 0.1, Number.NaN)).toBe(true);
    expect(isBetter(METRICS.roc_auc, Number.NaN, 0.1)).toBe(false);
  });

  it("uses P(class 1) ≥ 0.5 for binary labels and the first most probable class for multiclass", () => {
    const y = Int32Array.from([1, 0]);
    const half = Float64Array.from([0.5, 0.5, 0.5, 0.5]);
    expect(METRICS.accuracy.score(y, half, 2)).toBe(0.5); // both rows called class 1
    const tie = Float64Array.from([0.4, 0.4, 0.2, 0.2, 0.4, 0.4]);
    expect(METRICS.accuracy.score(Int32Array.from([0, 1]), tie, 3)).toBe(1);
  });

  it("rejects predictions of the wrong shape, class indices out of range and wrong target types", () => {
    const y = Int32Array.from([0, 1, 1]);
    expect(() => METRICS.roc_auc.score(y, new Float64Array(5), 2)).toThrow(/3 rows × 2 columns/);
    expect(() => METRICS.log_loss.score(Int32Array.from([0, 2]), new Float64Array(4), 2)).toThrow(/class index 2 at row 1/);
    expect(() => METRICS.f1.score(Float64Array.from([0, 1]), new Float64Array(4), 2)).toThrow(TypeError);
    expect(() => METRICS.rmse.score(Float64Array.from([1, 2]), new Float64Array(4), 2)).toThrow(/one column/);
    expect(() => METRICS.roc_auc.score(y, Float64Array.from([0.5, 0.5, NaN, NaN, 0, 1]), 2)).toThrow(/row 1/);
    expect(() => METRICS.log_loss.score(y, Float64Array.from([0.5, 0.5, -1, 2, 0, 1]), 2)).toThrow(/outside \[0, 1\]/);
  });

  it("leaves a class absent from a fold out of the multiclass ranking averages", () => {
    // Class 2 never occurs: the averages are over classes 0 and 1 only.
    const y = Int32Array.from([0, 0, 1, 1]);
    const p = Float64Array.from([0.8, 0.1, 0.1, 0.6, 0.3, 0.1, 0.2, 0.7, 0.1, 0.3, 0.6, 0.1]);
    expect(METRICS.roc_auc.score(y, p, 3)).toBe(1);
    expect(METRICS.average_precision.score(y, p, 3)).toBe(1);
  });

  it("gives NaN ROC AUC when a binary fold has one class, and AP 0 without positives", () => {
    const negatives = Int32Array.from([0, 0, 0]);
    const p = Float64Array.from([0.9, 0.1, 0.5, 0.5, 0.2, 0.8]);
    expect(METRICS.roc_auc.score(negatives, p, 2)).toBeNaN();
    expect(METRICS.average_precision.score(negatives, p, 2)).toBe(0);
  });
});
