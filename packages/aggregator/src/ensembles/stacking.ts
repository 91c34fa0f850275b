import type { Task } from "@nightshift/core";
import { fitRidge, type LineFunction, type LineObjective, minimizeLbfgs } from "@nightshift/learners";
import { sigmoid, STACKING_CLIP, stackingFeature, stackingLink } from "./combine-predictions.js";
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
  const objective = new StackerLogLoss(features, target as Int32Array, task === "binary" ? 1 : width, penalty);
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
 * f(w, b) = (1/n)·Σ_i ℓ_i + (λ/2)·‖w‖² with scores z_ic = b_c + Σ_m w_m·F_m[i, c] (K = 1 score
 * for binary, K classes for the softmax). The scores of the current point Z and of the line
 * direction U are kept, so a trial step of the line search costs O(n·K).
 */
class StackerLogLoss implements LineObjective, BoxObjective {
  readonly size: number;
  private readonly members: number;
  private readonly rows: number;
  private readonly theta: Float64Array;
  private readonly direction: Float64Array;
  private readonly scores: Float64Array;
  private readonly directionScores: Float64Array;
  private readonly residuals: Float64Array;
  private lastStep = Number.NaN;
  private lastLoss = Number.NaN;

  constructor(
    private readonly features: readonly Float64Array[],
    private readonly classOf: Int32Array,
    private readonly scoreCount: number,
    private readonly penalty: number,
  ) {
    this.members = features.length;
    this.rows = classOf.length;
    this.size = this.members + scoreCount;
    this.theta = new Float64Array(this.size);
    this.direction = new Float64Array(this.size);
    this.scores = new Float64Array(this.rows * scoreCount);
    this.directionScores = new Float64Array(this.rows * scoreCount);
    this.residuals = new Float64Array(this.rows * scoreCount);
  }

  evaluate(x: Float64Array, gradient: Float64Array): number {
    this.theta.set(x);
    this.project(x, this.scores);
    return this.valueAndGradient(this.lossAlong(0).loss, gradient);
  }

  along(direction: Float64Array): LineFunction {
    this.direction.set(direction);
    this.project(direction, this.directionScores);
    let ww = 0;
    let wd = 0;
    let dd = 0;
    for (let m = 0; m < this.members; m++) {
      ww += this.theta[m] * this.theta[m];
      wd += this.theta[m] * direction[m];
      dd += direction[m] * direction[m];
    }
    const penalty = this.penalty;
    return (step: number) => {
      const { loss, slope } = this.lossAlong(step);
      this.lastStep = step;
      this.lastLoss = loss;
      return { value: loss + (penalty / 2) * (ww + 2 * step * wd + step * step * dd), slope: slope + penalty * (wd + step * dd) };
    };
  }

  advance(step: number, gradient: Float64Array): number {
    const { theta, direction, scores, directionScores } = this;
    for (let j = 0; j < theta.length; j++) theta[j] += step * direction[j];
    for (let i = 0; i < scores.length; i++) scores[i] = scores[i] + step * directionScores[i];
    const loss = step === this.lastStep ? this.lastLoss : this.lossAlong(0).loss;
    this.lastStep = Number.NaN;
    return this.valueAndGradient(loss, gradient);
  }

  /** out = F·w + b for the parameters `parameters`. */
  private project(parameters: Float64Array, out: Float64Array): void {
    const k = this.scoreCount;
    for (let i = 0; i < this.rows; i++) for (let c = 0; c < k; c++) out[i * k + c] = parameters[this.members + c];
    for (let m = 0; m < this.members; m++) {
      const w = parameters[m];
      if (w === 0) continue;
      const f = this.features[m];
      for (let i = 0; i < out.length; i++) out[i] += w * f[i];
    }
  }

  private valueAndGradient(loss: number, gradient: Float64Array): number {
    const { residuals, rows, members, scoreCount: k, theta, penalty } = this;
    let squares = 0;
    for (let m = 0; m < members; m++) {
      const f = this.features[m];
      let sum = 0;
      for (let i = 0; i < residuals.length; i++) sum += residuals[i] * f[i];
      gradient[m] = sum / rows + penalty * theta[m];
      squares += theta[m] * theta[m];
    }
    for (let c = 0; c < k; c++) {
      let sum = 0;
      for (let i = c; i < residuals.length; i += k) sum += residuals[i];
      gradient[members + c] = sum / rows;
    }
    return loss + (penalty / 2) * squares;
  }

  /** Mean loss at Z + step·U and its derivative in step; fills `residuals` (∂ℓ/∂z) there. */
  private lossAlong(step: number): { loss: number; slope: number } {
    const { scores, directionScores, residuals, classOf, rows, scoreCount: k } = this;
    let loss = 0;
    let slope = 0;
    if (k === 1) {
      for (let i = 0; i < rows; i++) {
        const u = directionScores[i];
        const t = scores[i] + step * u;
        // ℓ = log(1 + e^t) − y·t, from one exponential without overflow.
        const e = Math.exp(-Math.abs(t));
        const margin = classOf[i] === 1 ? -t : t;
        loss += (margin > 0 ? margin : 0) + Math.log1p(e);
        const r = sigmoid(t) - (classOf[i] === 1 ? 1 : 0);
        residuals[i] = r;
        slope += r * u;
      }
      return { loss: loss / rows, slope: slope / rows };
    }
    for (let i = 0, o = 0; i < rows; i++, o += k) {
      let largest = -Infinity;
      for (let c = 0; c < k; c++) {
        const t = scores[o + c] + step * directionScores[o + c];
        residuals[o + c] = t;
        if (t > largest) largest = t;
      }
      let sum = 0;
      for (let c = 0; c < k; c++) {
        const e = Math.exp(residuals[o + c] - largest);
        residuals[o + c] = e;
        sum += e;
      }
      const y = classOf[i];
      loss += largest + Math.log(sum) - (scores[o + y] + step * directionScores[o + y]);
      for (let c = 0; c < k; c++) {
        const r = residuals[o + c] / sum - (c === y ? 1 : 0);
        residuals[o + c] = r;
        slope += r * directionScores[o + c];
      }
    }
    return { loss: loss / rows, slope: slope / rows };
  }
}
