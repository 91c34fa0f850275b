/**
 * Per-row weights for `class_weight`: "balanced" gives class c the weight n / (C · n_c) over the
 * C classes present in the training rows (scikit-learn's compute_class_weight, after King & Zeng
 * 2001; METHODS.md §9), so every class carries the same total weight n / C.
 */
export type ClassWeighting = "none" | "balanced";

export function rowWeights(classOf: Int32Array, classCount: number, weighting: ClassWeighting): Float64Array {
  const weights = new Float64Array(classOf.length).fill(1);
  if (weighting === "none") return weights;
  const counts = new Float64Array(classCount);
  for (let i = 0; i < classOf.length; i++) counts[classOf[i]]++;
  let present = 0;
  for (let c = 0; c < classCount; c++) if (counts[c] > 0) present++;
  for (let i = 0; i < classOf.length; i++) weights[i] = classOf.length / (present * counts[classOf[i]]);
  return weights;
}
