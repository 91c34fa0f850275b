import { describe, expect, it } from "vitest";
import {
  accuracy,
  averagePrecision,
  balancedAccuracy,
  brierScore,
  calibrationBins,
  confusionMatrix,
  f1Score,
  logLoss,
  macroAveragePrecision,
  macroRocAucOneVsRest,
  matthewsCorrelation,
  METRICS,
  precisionRecallCurve,
  rocAuc,
  rocCurve,
} from "../src/metrics/index.js";

const labels = (values: number[]) => Uint8Array.from(values);
const scores = (values: number[]) => Float64Array.from(values);
const classes = (values: number[]) => Int32Array.from(values);
const rows = (values: number[][]) => Float64Array.from(values.flat());
/** A doctest line "0.83..." matches every value whose printed form starts with "0.83". */
const doctestPrefix = (value: number) => String(value);

describe("scikit-learn docstring worked examples (METHODS.md §5)", () => {
  it("1. average precision is the step-wise sum, not the trapezoid", () => {
    const ap = averagePrecision(labels([0, 0, 1, 1]), scores([0.1, 0.4, 0.35, 0.8]));
    // scikit-learn docstring of average_precision_score: "average_precision_score(y_true, y_scores)  0.83..."
    expect(doctestPrefix(ap)).toMatch(/^0\.83/);
    // Hand check in METHODS.md §5: 0.5·1 + 0 + 0.5·(2/3) = 5/6 (the trapezoid would give 0.79).
    expect(ap).toBeCloseTo(5 / 6, 14);
  });

  it("1. precision-recall curve points and thresholds", () => {
    const curve = precisionRecallCurve(labels([0, 0, 1, 1]), scores([0.1, 0.4, 0.35, 0.8]));
    // scikit-learn docstring of precision_recall_curve:
    // "precision array([0.5, 0.66666667, 0.5, 1., 1.])", "recall array([1., 1., 0.5, 0.5, 0.])",
    // "thresholds array([0.1, 0.35, 0.4, 0.8])"
    expect(Array.from(curve.precision)).toEqual([0.5, 2 / 3, 0.5, 1, 1]);
    expect(Array.from(curve.recall)).toEqual([1, 1, 0.5, 0.5, 0]);
    expect(Array.from(curve.thresholds)).toEqual([0.1, 0.35, 0.4, 0.8]);
  });

  it("2. ROC curve with +inf first threshold and its area", () => {
    const positive = labels([0, 0, 1, 1]); // docstring labels [1, 1, 2, 2] with pos_label=2
    const s = scores([0.1, 0.4, 0.35, 0.8]);
    const curve = rocCurve(positive, s);
    // scikit-learn docstring of roc_curve: "fpr array([0. , 0. , 0.5, 0.5, 1. ])",
    // "tpr array([0. , 0.5, 0.5, 1. , 1. ])", "thresholds array([ inf, 0.8 , 0.4 , 0.35, 0.1 ])"
    expect(Array.from(curve.falsePositiveRate)).toEqual([0, 0, 0.5, 0.5, 1]);
    expect(Array.from(curve.truePositiveRate)).toEqual([0, 0.5, 0.5, 1, 1]);
    expect(Array.from(curve.thresholds)).toEqual([Infinity, 0.8, 0.4, 0.35, 0.1]);
    // scikit-learn docstring of auc: "metrics.auc(fpr, tpr)  0.75"
    expect(rocAuc(positive, s)).toBe(0.75);
  });

  it("3. multiclass average precision (macro over label-binarised columns) and one-vs-rest ROC AUC", () => {
    const y = classes([0, 0, 1, 1, 2, 2]);
    const p = rows([
      [0.7, 0.2, 0.1],
      [0.4, 0.3, 0.3],
      [0.1, 0.8, 0.1],
      [0.2, 0.3, 0.5],
      [0.4, 0.4, 0.2],
      [0.1, 0.2, 0.7],
    ]);
    // scikit-learn docstring of average_precision_score (multiclass): "0.77..."; exact 0.7778 per METHODS.md §5.
    expect(doctestPrefix(macroAveragePrecision(y, p, 3))).toMatch(/^0\.77/);
    expect(macroAveragePrecision(y, p, 3)).toBeCloseTo(0.7778, 4);
    // One-vs-rest macro ROC AUC on the same data: 0.8333, computed with scikit-learn 1.9.1 (METHODS.md §5).
    expect(macroRocAucOneVsRest(y, p, 3)).toBeCloseTo(0.8333, 4);
  });

  it("4. log loss in natural log over the true class's column", () => {
    // log_loss(["spam", "ham", "ham", "spam"], ...): columns are the sorted labels ham, spam.
    const y = classes([1, 0, 0, 1]);
    const p = rows([
      [0.1, 0.9],
      [0.9, 0.1],
      [0.8, 0.2],
      [0.35, 0.65],
    ]);
    // scikit-learn docstring of log_loss: "0.21616..."
    expect(doctestPrefix(logLoss(y, p, 2))).toMatch(/^0\.21616/);
    expect(METRICS.log_loss.score(y, p, 2)).toBe(logLoss(y, p, 2));
  });

  it("5. Brier score, binary and multiclass", () => {
    const binary = rows([
      [0.9, 0.1],
      [0.1, 0.9],
      [0.2, 0.8],
      [0.7, 0.3],
    ]);
    // scikit-learn docstring of brier_score_loss: "brier_score_loss(y_true, y_prob)  0.037..."
    // ("scale_by_half=False → 0.075", i.e. the binary score is not the sum over both columns).
    expect(doctestPrefix(brierScore(classes([0, 1, 1, 0]), binary, 2))).toMatch(/^0\.037/);
    expect(brierScore(classes([0, 1, 1, 0]), binary, 2)).toBeCloseTo(0.0375, 12);
    const multiclass = rows([
      [0.8, 0.1, 0.1],
      [0.2, 0.7, 0.1],
      [0.2, 0.2, 0.6],
    ]);
    // scikit-learn (1.7+) docstring of brier_score_loss, labels eggs/ham/spam: "0.146..."
    expect(doctestPrefix(brierScore(classes([0, 1, 2]), multiclass, 3))).toMatch(/^0\.146/);
    expect(brierScore(classes([0, 1, 2]), multiclass, 3)).toBeCloseTo(0.44 / 3, 12);
  });

  it("6. balanced accuracy is the mean recall over classes", () => {
    const matrix = confusionMatrix(classes([0, 1, 0, 0, 1, 0]), classes([0, 1, 0, 0, 0, 1]), 2);
    // scikit-learn docstring of balanced_accuracy_score: "0.625"
    expect(balancedAccuracy(matrix)).toBe(0.625);
  });

  it("7. Matthews correlation coefficient", () => {
    // matthews_corrcoef([+1, +1, +1, -1], [+1, -1, +1, +1]) with -1 → class 0.
    const matrix = confusionMatrix(classes([1, 1, 1, 0]), classes([1, 0, 1, 1]), 2);
    // scikit-learn docstring of matthews_corrcoef: "-0.33..."; exact −1/3 per METHODS.md §5.
    expect(doctestPrefix(matthewsCorrelation(matrix))).toMatch(/^-0\.33/);
    expect(matthewsCorrelation(matrix)).toBeCloseTo(-1 / 3, 14);
  });

  it("8. macro F1 over three classes, micro F1 = accuracy", () => {
    const matrix = confusionMatrix(classes([0, 1, 2, 0, 1, 2]), classes([0, 2, 1, 0, 0, 1]), 3);
    // scikit-learn docstring of f1_score: "average='macro' 0.26...", "average='micro' 0.33...",
    // "average=None array([0.8, 0. , 0. ])" → macro = 0.8 / 3.
    expect(doctestPrefix(f1Score(matrix))).toMatch(/^0\.26/);
    expect(f1Score(matrix)).toBeCloseTo(0.8 / 3, 14);
    expect(doctestPrefix(accuracy(matrix))).toMatch(/^0\.33/);
  });

  it("9. a tie between a positive and a negative counts half and forms one threshold", () => {
    const positive = labels([0, 1, 0, 1]);
    const s = scores([0.5, 0.5, 0.2, 0.9]);
    // Computed with scikit-learn 1.9.1 (METHODS.md §5 example 9): ROC AUC 0.875, AP 0.8333;
    // breaking the tie positive-first would give AP 1.0.
    expect(rocAuc(positive, s)).toBe(0.875);
    expect(averagePrecision(positive, s)).toBeCloseTo(0.8333, 4);
    expect(averagePrecision(positive, s)).toBeCloseTo(5 / 6, 14);
  });

  it("calibration_curve docstring example", () => {
    const bins = calibrationBins(
      labels([0, 0, 0, 0, 1, 1, 1, 1, 1]),
      scores([0.1, 0.2, 0.3, 0.4, 0.65, 0.7, 0.8, 0.9, 1.0]),
      3,
      "uniform",
    );
    // scikit-learn 1.2.1 docstring of calibration_curve: "prob_true array([0. , 0.5, 1. ])",
    // "prob_pred array([0.2  , 0.525, 0.85 ])"
    expect(Array.from(bins.fractionPositive)).toEqual([0, 0.5, 1]);
    expect(bins.meanPredicted[0]).toBeCloseTo(0.2, 14);
    expect(bins.meanPredicted[1]).toBeCloseTo(0.525, 14);
    expect(bins.meanPredicted[2]).toBeCloseTo(0.85, 14);
  });
});

describe("known answers (common practice, METHODS.md §12)", () => {
  const n = 200;
  const y = new Int32Array(n);
  for (let i = 0; i < n; i++) y[i] = i % 25 === 0 ? 1 : 0; // 8 positives = 4 %
  const positive = Uint8Array.from(y);

  it("a constant scorer has average precision = positive rate and ROC AUC 0.5", () => {
    const constant = new Float64Array(n).fill(0.3);
    expect(averagePrecision(positive, constant)).toBeCloseTo(8 / 200, 14);
    expect(rocAuc(positive, constant)).toBe(0.5);
  });

  it("predicting the majority class gives accuracy = majority share and MCC 0", () => {
    const majority = new Float64Array(2 * n);
    for (let i = 0; i < n; i++) majority[2 * i] = 1;
    expect(METRICS.accuracy.score(y, majority, 2)).toBeCloseTo(192 / 200, 14);
    expect(METRICS.mcc.score(y, majority, 2)).toBe(0);
    // Also from METHODS.md §9 (computed with scikit-learn 1.9.1): balanced accuracy 0.5 and F1 0.
    expect(METRICS.balanced_accuracy.score(y, majority, 2)).toBe(0.5);
    expect(METRICS.f1.score(y, majority, 2)).toBe(0);
  });
});
