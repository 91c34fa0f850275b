export { MetricScratch, createMetricScratch } from "./scratch.js";
export { averagePrecision, macroAveragePrecision } from "./average-precision.js";
export { rocAuc, macroRocAucOneVsRest } from "./roc-auc.js";
export { LOG_LOSS_EPSILON, logLoss } from "./log-loss.js";
export { brierScore } from "./brier.js";
export {
  type PrecisionRecall,
  accuracy,
  balancedAccuracy,
  confusionMatrix,
  confusionMatrixOfProbabilities,
  f1Score,
  matthewsCorrelation,
  precisionRecallAtThreshold,
  predictedLabels,
} from "./confusion.js";
export {
  type PrecisionRecallCurve,
  type RocCurve,
  type RocCurveOptions,
  precisionRecallCurve,
  rocCurve,
} from "./curves.js";
export {
  type CalibrationBins,
  type CalibrationStrategy,
  calibrationBins,
  expectedCalibrationError,
} from "./calibration.js";
export { meanAbsoluteError, r2Score, rootMeanSquaredError } from "./regression.js";
export {
  type Metric,
  type MetricName,
  METRICS,
  METRIC_NAMES,
  isBetter,
  isMetricName,
  metricByName,
} from "./registry.js";
export * from "./default-metric.js";
