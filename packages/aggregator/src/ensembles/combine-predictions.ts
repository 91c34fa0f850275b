import type { Task } from "@nightshift/core";
import type { EnsembleSpec } from "./ensemble-spec.js";

type Predictions = Float32Array | Float64Array;

/** Probabilities are kept away from 0 and 1 before a logit or log (a pure tree leaf predicts exactly 0 or 1). */
export const STACKING_CLIP = 1e-6;

/** σ(z) without overflow for large |z|. */
export function sigmoid(z: number): number {
  if (z >= 0) return 1 / (1 + Math.exp(-z));
  const e = Math.exp(z);
  return e / (1 + e);
}

/** The stacker's input for one stored prediction value. */
export function stackingFeature(value: number, link: "logit" | "log" | "identity", clip: number): number {
  if (link === "identity") return value;
  const p = value < clip ? clip : value > 1 - clip ? 1 - clip : value;
  return link === "logit" ? Math.log(p / (1 - p)) : Math.log(p);
}

/** The stacker's link for a task: logits of P(positive), log-probabilities per class, or the values. */
export function stackingLink(task: Task): "logit" | "log" | "identity" {
  return task === "binary" ? "logit" : task === "multiclass" ? "log" : "identity";
}

/**
 * Applies an ensemble spec to its members' predictions (stored layout, `width` columns per
 * row, members in the spec's order) and returns the ensemble's predictions in the same layout.
 *
 * - Averaging kinds: q = Σ_m w_m · p_m (for multiclass per class column; weights sum to 1, so
 *   rows still sum to 1).
 * - Stacking, binary: q = σ(b + Σ_m w_m · logit(p_m)); multiclass: q_c = softmax_c(b_c + Σ_m w_m ·
 *   log p_mc), a learned weighted geometric mean; regression: q = b + Σ_m w_m · p_m.
 */
export function combinePredictions(spec: EnsembleSpec, task: Task, width: number, members: readonly Predictions[], rowCount: number): Float64Array {
  if (members.length !== spec.members.length) throw new RangeError(`the spec has ${spec.members.length} members, got ${members.length} prediction arrays`);
  for (const m of members) if (m.length !== rowCount * width) throw new RangeError(`member predictions hold ${m.length} values, expected ${rowCount} × ${width}`);
  const out = new Float64Array(rowCount * width);
  if (spec.kind !== "stacking") {
    spec.members.forEach(({ weight }, m) => {
      const p = members[m];
      for (let i = 0; i < out.length; i++) out[i] += weight * p[i];
    });
    return out;
  }
  const link = spec.link ?? stackingLink(task);
  const clip = spec.clip ?? STACKING_CLIP;
  const intercepts = spec.intercepts ?? [];
  if (intercepts.length !== width) throw new RangeError(`a stacker for ${width} prediction columns needs ${width} intercepts, got ${intercepts.length}`);
  for (let i = 0; i < rowCount; i++) for (let c = 0; c < width; c++) out[i * width + c] = intercepts[c];
  spec.members.forEach(({ weight }, m) => {
    const p = members[m];
    for (let i = 0; i < out.length; i++) out[i] += weight * stackingFeature(p[i], link, clip);
  });
  if (task === "binary") for (let i = 0; i < out.length; i++) out[i] = sigmoid(out[i]);
  else if (task === "multiclass") softmaxRows(out, width);
  return out;
}

/** Row-wise softmax in place (max subtracted first, so no exponential overflows). */
export function softmaxRows(scores: Float64Array, width: number): void {
  for (let o = 0; o < scores.length; o += width) {
    let largest = -Infinity;
    for (let c = 0; c < width; c++) if (scores[o + c] > largest) largest = scores[o + c];
    let sum = 0;
    for (let c = 0; c < width; c++) {
      const e = Math.exp(scores[o + c] - largest);
      scores[o + c] = e;
      sum += e;
    }
    for (let c = 0; c < width; c++) scores[o + c] /= sum;
  }
}

/**
 * Stored-layout predictions as metrics and output take them: binary [P(class 0), P(class 1)]
 * per row; multiclass and regression unchanged.
 */
export function toFullWidth(task: Task, stored: Float64Array): Float64Array {
  if (task !== "binary") return stored;
  const out = new Float64Array(stored.length * 2);
  for (let i = 0; i < stored.length; i++) {
    out[2 * i] = 1 - stored[i];
    out[2 * i + 1] = stored[i];
  }
  return out;
}

/** A learner's full-width predictions in the stored layout, in float64 (P(positive) only for binary). */
export function toStoredLayout(task: Task, predictions: Float64Array, fullWidth: number): Float64Array {
  if (task !== "binary") return predictions;
  const rows = predictions.length / fullWidth;
  const out = new Float64Array(rows);
  for (let i = 0; i < rows; i++) out[i] = predictions[i * fullWidth + 1];
  return out;
}
