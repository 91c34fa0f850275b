/**
 * Weights for `class_weight`: "balanced" gives class c the weight n / (C · n_c) over the C classes
 * present in the training rows (scikit-learn's compute_class_weight, after King & Zeng 2001;
 * METHODS.md §9), so every class carries the same total weight n / C; "none" weights every class 1.
 */
export type ClassWeighting = "none" | "balanced";

/** Weight per class index 0..classCount-1, for rows labelled by `classOf`. */
export function classWeights(classOf: Int32Array, classCount: number, weighting: ClassWeighting): Float64Array {
  const weights = new Float64Array(classCount).fill(1);
  if (weighting === "none") return weights;
  const counts = new Float64Array(classCount);
  for (let i = 0; i < classOf.length; i++) counts[classOf[i]]++;
  let present = 0;
  for (let c = 0; c < classCount; c++) if (counts[c] > 0) present++;
  for (let c = 0; c < classCount; c++) weights[c] = counts[c] > 0 ? classOf.length / (present * counts[c]) : 0;
  return weights;
}
