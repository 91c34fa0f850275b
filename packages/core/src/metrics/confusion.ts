import { checkClassPredictions } from "./prediction-shape.js";

/*
 * Label metrics from a confusion matrix, as scikit-learn defines them. A confusion matrix here
 * is a row-major Uint32Array of classCount × classCount counts: row = true class, column =
 * predicted class (scikit-learn's `confusion_matrix` layout).
 */

/**
 * Hard labels from class probabilities. Binary (width 2): class 1 when P(class 1) ≥ 0.5, so a
 * row at exactly 0.5 counts as positive. Multiclass: the most probable class, the lowest
 * index among equals (NumPy's argmax).
 */
export function predictedLabels(predictions: Float64Array, width: number, out?: Int32Array): Int32Array {
  const n = predictions.length / width;
  if (!Number.isInteger(n)) throw new RangeError(`${predictions.length} predictions do not fill rows of width ${width}`);
  const labels = out ?? new Int32Array(n);
  if (labels.length !== n) throw new RangeError(`label buffer holds ${labels.length} rows, expected ${n}`);
  for (let i = 0; i < n; i++) labels[i] = predictedLabel(predictions, width, i * width);
  return labels;
}

function predictedLabel(predictions: Float64Array, width: number, row: number): number {
  if (width === 2) return predictions[row + 1] >= 0.5 ? 1 : 0;
  let best = 0;
  let bestValue = predictions[row];
  for (let c = 1; c < width; c++) {
    const value = predictions[row + c];
    if (value > bestValue) {
      best = c;
      bestValue = value;
    }
  }
  return best;
}

/** Confusion matrix of true class indices `y` against predicted class indices. */
export function confusionMatrix(
  y: Int32Array,
  predicted: Int32Array,
  classCount: number,
  out?: Uint32Array,
): Uint32Array {
  if (predicted.length !== y.length) {
    throw new RangeError(`true and predicted labels differ in length (${y.length} vs ${predicted.length})`);
  }
  const matrix = prepareMatrix(classCount, out);
  for (let i = 0; i < y.length; i++) {
    const truth = y[i];
    const guess = predicted[i];
    if (truth < 0 || truth >= classCount || guess < 0 || guess >= classCount) {
      throw new RangeError(`row ${i}: labels ${truth}, ${guess} are outside [0, ${classCount})`);
    }
    matrix[truth * classCount + guess]++;
  }
  return matrix;
}

/**
 * Confusion matrix of true class indices against the hard labels of probabilities (the rule of
 * `predictedLabels`), without materialising the labels.
 */
export function confusionMatrixOfProbabilities(
  y: Int32Array,
  predictions: Float64Array,
  width: number,
  out?: Uint32Array,
): Uint32Array {
  checkClassPredictions(y, predictions, width);
  const matrix = prepareMatrix(width, out);
  for (let i = 0; i < y.length; i++) {
    matrix[y[i] * width + predictedLabel(predictions, width, i * width)]++;
  }
  return matrix;
}

function prepareMatrix(classCount: number, out: Uint32Array | undefined): Uint32Array {
  if (!Number.isInteger(classCount) || classCount < 1) throw new RangeError(`class count ${classCount} is not a positive integer`);
  const size = classCount * classCount;
  if (out === undefined) return new Uint32Array(size);
  if (out.length !== size) throw new RangeError(`confusion buffer holds ${out.length} cells, expected ${size}`);
  return out.fill(0);
}

function classCountOf(matrix: Uint32Array): number {
  const classCount = Math.round(Math.sqrt(matrix.length));
  if (classCount * classCount !== matrix.length || classCount === 0) {
    throw new RangeError(`a confusion matrix is square; ${matrix.length} cells is not`);
  }
  return classCount;
}

/** Fraction of rows predicted correctly; NaN for no rows. */
export function accuracy(matrix: Uint32Array): number {
  const classCount = classCountOf(matrix);
  let correct = 0;
  let total = 0;
  for (let c = 0; c < matrix.length; c++) total += matrix[c];
  for (let c = 0; c < classCount; c++) correct += matrix[c * classCount + c];
  return total === 0 ? Number.NaN : correct / total;
}

/**
 * Mean recall over the classes present among the true labels (`balanced_accuracy_score`):
 * a class that is only predicted, never true, has no recall and is left out.
 */
export function balancedAccuracy(matrix: Uint32Array): number {
  const classCount = classCountOf(matrix);
  let sum = 0;
  let present = 0;
  for (let c = 0; c < classCount; c++) {
    let support = 0;
    for (let d = 0; d < classCount; d++) support += matrix[c * classCount + d];
    if (support === 0) continue;
    sum += matrix[c * classCount + c] / support;
    present++;
  }
  return present === 0 ? Number.NaN : sum / present;
}

/** F1 of one class, 2·TP / (2·TP + FP + FN); 0 when the class is neither true nor predicted. */
function classF1(matrix: Uint32Array, classCount: number, c: number): number {
  const truePositives = matrix[c * classCount + c];
  let trueCount = 0;
  let predictedCount = 0;
  for (let d = 0; d < classCount; d++) {
    trueCount += matrix[c * classCount + d];
    predictedCount += matrix[d * classCount + c];
  }
  const denominator = trueCount + predictedCount;
  return denominator === 0 ? 0 : (2 * truePositives) / denominator;
}

/**
 * F1 as `f1_score` with zero_division = 0: two classes → the F1 of class 1 ('binary',
 * pos_label = 1); more → the unweighted mean over the classes that occur among the true or the
 * predicted labels ('macro'; scikit-learn takes its labels from both). NaN for no rows.
 */
export function f1Score(matrix: Uint32Array): number {
  const classCount = classCountOf(matrix);
  if (classCount === 2) return classF1(matrix, 2, 1);
  let sum = 0;
  let present = 0;
  for (let c = 0; c < classCount; c++) {
    let occurrences = 0;
    for (let d = 0; d < classCount; d++) occurrences += matrix[c * classCount + d] + matrix[d * classCount + c];
    if (occurrences === 0) continue;
    sum += classF1(matrix, classCount, c);
    present++;
  }
  return present === 0 ? Number.NaN : sum / present;
}

/**
 * Matthews correlation coefficient in the multiclass form (Gorodkin, Comput. Biol. Chem. 28:367–374,
 * 2004; reference from memory) that scikit-learn's
 * `matthews_corrcoef` uses for every case, binary included:
 * (c·s − Σ_k p_k·t_k) / sqrt((s² − Σ_k p_k²)(s² − Σ_k t_k²)), c = correct, s = rows,
 * t_k / p_k = true / predicted count of class k. 0 when the denominator is 0.
 */
export function matthewsCorrelation(matrix: Uint32Array): number {
  const classCount = classCountOf(matrix);
  let correct = 0;
  let samples = 0;
  let truePredicted = 0;
  let predictedSquares = 0;
  let trueSquares = 0;
  for (let k = 0; k < classCount; k++) {
    let trueCount = 0;
    let predictedCount = 0;
    for (let d = 0; d < classCount; d++) {
      trueCount += matrix[k * classCount + d];
      predictedCount += matrix[d * classCount + k];
    }
    correct += matrix[k * classCount + k];
    samples += trueCount;
    truePredicted += trueCount * predictedCount;
    predictedSquares += predictedCount * predictedCount;
    trueSquares += trueCount * trueCount;
  }
  const covariance = correct * samples - truePredicted;
  const predictedVariance = samples * samples - predictedSquares;
  const trueVariance = samples * samples - trueSquares;
  if (predictedVariance * trueVariance === 0) return 0;
  return covariance / Math.sqrt(trueVariance * predictedVariance);
}

export interface PrecisionRecall {
  readonly precision: number;
  readonly recall: number;
}

/**
 * Precision and recall when every row scoring at least `threshold` is called positive;
 * 0 where a ratio would be 0/0 (zero_division = 0).
 */
export function precisionRecallAtThreshold(
  positive: Uint8Array,
  scores: Float64Array | Float32Array,
  threshold: number,
): PrecisionRecall {
  if (positive.length !== scores.length) {
    throw new RangeError(`labels and scores differ in length (${positive.length} vs ${scores.length})`);
  }
  let truePositives = 0;
  let called = 0;
  let positives = 0;
  for (let i = 0; i < scores.length; i++) {
    const isPositive = positive[i] !== 0;
    const isCalled = scores[i] >= threshold;
    if (isPositive) positives++;
    if (isCalled) {
      called++;
      if (isPositive) truePositives++;
    }
  }
  return {
    precision: called === 0 ? 0 : truePositives / called,
    recall: positives === 0 ? 0 : truePositives / positives,
  };
}
