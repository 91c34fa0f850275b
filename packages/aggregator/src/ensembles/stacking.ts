import type { Task } from "@nightshift/core";
import { fitRidge, interceptGradient, LogLossObjective, minimizeLbfgs, type ScoreMap } from "@nightshift/learners";
import { STACKING_CLIP, stackingFeature, stackingLink } from "./combine-predictions.js";
import { nonNegativeLeastSquares } from "./non-negative-least-squares.js";
import { type BoxObjective, minimizeOnBox } from "./spectral-projected-gradient.js";

export interface StackingOptions {
  /** Constrain every member's coefficient to be ≥ 0 (Breiman 1996). */
  readonly nonNegative: boolean;
  /**
   * λ of (λ/2)·‖w‖² next to the mean loss; default 1/n, which is scikit-learn's
   * LogisticRegression(C=1) and Ridge(alpha=1) written per row.
   */
  readonly penalty?: number;
}

export interface StackerFit {
  /** One coefficient per member. */
  readonly weights: Float64Array;
  /** One intercept per stored prediction column. */
  readonly intercepts: Float64Array;
  readonly link: "logit" | "log" | "identity";
  readonly clip: number;
  readonly converged: boolean;
}

/**
 * Stacked generalisation (Wolpert 1992; Breiman, "Stacked regressions", Machine Learning
 * 24:49–64, 1996): a linear meta-model on the members' out-of-fold predictions, one
 * coefficient per member so each coefficient says how much the stacker trusts that member.
 *
 * - binary: logistic regression on the members' logits, z = b + Σ_m w_m·logit(p_m);
 * - multiclass: a softmax on the members' log-probabilities with one weight per member shared
 *   by the classes, z_c = b_c + Σ_m w_m·log p_mc (a learned weighted geometric mean);
 * - regression: ridge regression on the members' values.
 * Objective: mean loss + (λ/2)·‖w‖², intercepts free; L-BFGS (Nocedal & Wright, Alg. 7.5)
 * or, with non-negative weights, spectral projected gradient (classification) and
 * Lawson–Hanson NNLS (regression).
 *
 * `members[m]`: out-of-fold predictions in the stored layout (rows × width).
 */
export function fitStacker(members: readonly Float32Array[], target: Int32Array | Float64Array, task: Task, width: number, options: StackingOptions): StackerFit {
  const rows = target.length;
  const count = members.length;
  if (count === 0) throw new RangeError("stacking needs at least one member");
  if (rows === 0) throw new RangeError("stacking needs at least one row");
  const link = stackingLink(task);
  const penalty = options.penalty ?? 1 / rows;
  const features = members.map((p) => Float64Array.from(p, (v) => stackingFeature(v, link, STACKING_CLIP)));
  if (task === "regression") return fitRegressionStacker(features, target as Float64Array, penalty, options.nonNegative);
  const classCount = task === "binary" ? 2 : width;
  const objective = new LogLossObjective(memberScoreMap(features, classCount === 2 ? 1 : classCount), target as Int32Array, classCount, new Float64Array(classCount).fill(1), penalty);
  const start = new Float64Array(objective.size);
  let x: Float64Array;
  let converged: boolean;
  if (options.nonNegative) {
    const lower = new Float64Array(objective.size).fill(-Infinity);
    lower.fill(0, 0, count);
    const result = minimizeOnBox(objective, start, lower, { maxIterations: 5000, tolerance: 1e-9 });
    x = result.x;
    converged = result.converged;
  } else {
    const result = minimizeLbfgs(objective, start, { maxIterations: 2000, tolerance: 1e-10 });
    x = result.x;
    converged = result.converged;
  }
  return { weights: x.slice(0, count), intercepts: x.slice(count), link, clip: STACKING_CLIP, converged };
}

function fitRegressionStacker(features: Float64Array[], y: Float64Array, penalty: number, nonNegative: boolean): StackerFit {
  const n = y.length;
  const p = features.length;
  const design = new Float64Array(n * p);
  for (let m = 0; m < p; m++) for (let i = 0; i < n; i++) design[i * p + m] = features[m][i];
  if (!nonNegative) {
    const fit = fitRidge(design, n, p, y, penalty);
    if (fit === null) throw new RangeError("the members' predictions are collinear and the ridge penalty is zero");
    return { weights: fit.weights, intercepts: Float64Array.of(fit.intercept), link: "identity", clip: STACKING_CLIP, converged: true };
  }
  // With a free intercept b = ȳ − m·w, the problem is NNLS on the centred columns.
  const means = new Float64Array(p);
  let targetMean = 0;
  for (let i = 0; i < n; i++) {
    for (let m = 0; m < p; m++) means[m] += design[i * p + m];
    targetMean += y[i];
  }
  for (let m = 0; m < p; m++) means[m] /= n;
  targetMean /= n;
  const gram = new Float64Array(p * p);
  const moment = new Float64Array(p);
  for (let i = 0; i < n; i++) {
    const t = y[i] - targetMean;
    for (let a = 0; a < p; a++) {
      const ca = design[i * p + a] - means[a];
      moment[a] += ca * t;
      for (let b = 0; b <= a; b++) gram[a * p + b] += ca * (design[i * p + b] - means[b]);
    }
  }
  for (let a = 0; a < p; a++) {
    for (let b = 0; b <= a; b++) {
      gram[a * p + b] /= n;
      gram[b * p + a] = gram[a * p + b];
    }
    gram[a * p + a] += penalty;
    moment[a] /= n;
  }
  const weights = nonNegativeLeastSquares(gram, moment, p);
  let intercept = targetMean;
  for (let m = 0; m < p; m++) intercept -= means[m] * weights[m];
  return { weights, intercepts: Float64Array.of(intercept), link: "identity", clip: STACKING_CLIP, converged: true };
}

/**
 * The stacker's scores z_ic = b_c + Σ_m w_m·F_m[i, c] (K = 1 score for binary, K classes for
 * the softmax): one weight per member shared by the classes, then free intercepts.
 */
function memberScoreMap(features: readonly Float64Array[], scoreCount: number): ScoreMap {
  const members = features.length;
  return {
    size: members + scoreCount,
    penalised: members,
    project(parameters, out) {
      for (let o = 0; o < out.length; o += scoreCount) for (let c = 0; c < scoreCount; c++) out[o + c] = parameters[members + c];
      for (let m = 0; m < members; m++) {
        const w = parameters[m];
        if (w === 0) continue;
        const f = features[m];
        for (let i = 0; i < out.length; i++) out[i] += w * f[i];
      }
    },
    pullBack(residuals, gradient) {
      for (let m = 0; m < members; m++) {
        const f = features[m];
        let sum = 0;
        for (let i = 0; i < residuals.length; i++) sum += residuals[i] * f[i];
        gradient[m] = sum;
      }
      interceptGradient(residuals, scoreCount, gradient, members);
    },
  };
}
