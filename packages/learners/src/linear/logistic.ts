import type { LineFunction } from "./line-search.js";
import { minimizeLbfgs, type LbfgsResult, type LineObjective } from "./lbfgs.js";
import type { LinearKernels } from "./linear-kernels.js";

/**
 * L2-regularised logistic regression (binary) and its multinomial form (softmax over K classes,
 * K×p weights), fitted by L-BFGS from zero weights. The objective is
 *
 *   f(W, b) = (1/n) Σ_i s_i · ℓ_i(W, b) + (λ / 2)·‖W‖²,
 *
 * with s_i the row's class weight, ℓ_i the log loss of row i (binary: log(1 + e^z) − y·z with
 * z = x·w + b; softmax: logsumexp(z) − z_y with z_c = x·w_c + b_c), the intercepts b not
 * penalised and λ = `penalty`. The loss is averaged (not summed) so gradients and tolerances do
 * not grow with n.
 */
export interface LogisticProblem {
  /** The design matrix (rows × width) inside its product kernels, with room for three score buffers. */
  readonly design: LinearKernels;
  readonly rows: number;
  readonly width: number;
  /** Class index per row in 0..classCount-1. */
  readonly classOf: Int32Array;
  /** 2 fits one weight vector for class 1 against class 0; more fits a softmax. */
  readonly classCount: number;
  /** Weight of each class; row i weighs s_i = classWeights[classOf[i]]. */
  readonly classWeights: Float64Array;
  /** λ, the weight of (λ/2)·‖W‖² next to the mean loss. */
  readonly penalty: number;
}

export interface LogisticFit {
  /** Rows of p weights: one row (for class 1) when binary, K rows for a softmax. */
  readonly weights: Float64Array;
  readonly intercepts: Float64Array;
  readonly optimisation: LbfgsResult;
}

export function fitLogistic(problem: LogisticProblem, options: { maxIterations: number; tolerance: number }): LogisticFit {
  const objective = problem.classCount === 2 ? new BinaryLogLoss(problem) : new SoftmaxLogLoss(problem);
  const scores = objective.scoreCount;
  const p = problem.width;
  const result = minimizeLbfgs(objective, new Float64Array(objective.size), options);
  return { weights: result.x.slice(0, scores * p), intercepts: result.x.slice(scores * p), optimisation: result };
}

/**
 * Shared state of both objectives: the current parameters θ = (W, b), the scores Z = XWᵀ + b of
 * the current point and, during a line search, U = X·Dᵀ + d_b of the direction, so that a trial
 * step only needs Z + α·U (O(n·k)) rather than a new product with X.
 */
abstract class LinearLogLoss implements LineObjective {
  readonly size: number;
  readonly scoreCount: number;
  protected readonly problem: LogisticProblem;
  protected readonly theta: Float64Array;
  protected readonly direction: Float64Array;
  protected readonly scores: Float64Array;
  protected readonly directionScores: Float64Array;
  /** s_i · ∂ℓ_i/∂z_ic at the step of the last `lossAlong` call. */
  protected readonly residuals: Float64Array;
  private lastStep = NaN;
  private lastLoss = NaN;

  constructor(problem: LogisticProblem, scoreCount: number) {
    this.problem = problem;
    this.scoreCount = scoreCount;
    this.size = scoreCount * (problem.width + 1);
    this.theta = new Float64Array(this.size);
    this.direction = new Float64Array(this.size);
    this.scores = problem.design.buffer(problem.rows * scoreCount);
    this.directionScores = problem.design.buffer(problem.rows * scoreCount);
    this.residuals = problem.design.buffer(problem.rows * scoreCount);
  }

  /**
   * Mean weighted loss at the scores Z + step·U, and Σ_i Σ_c r_ic·u_ic / n (the loss part of
   * φ'(step)); fills `residuals` at that step.
   */
  protected abstract lossAlong(step: number): { loss: number; slope: number };

  evaluate(x: Float64Array, gradient: Float64Array): number {
    this.theta.set(x);
    this.project(this.theta, this.scores);
    return this.valueAndGradient(this.lossAlong(0).loss, gradient);
  }

  along(direction: Float64Array): LineFunction {
    this.direction.set(direction);
    this.project(direction, this.directionScores);
    const penalised = this.scoreCount * this.problem.width;
    let ww = 0;
    let wd = 0;
    let dd = 0;
    for (let j = 0; j < penalised; j++) {
      ww += this.theta[j] * this.theta[j];
      wd += this.theta[j] * direction[j];
      dd += direction[j] * direction[j];
    }
    const penalty = this.problem.penalty;
    return (step: number) => {
      const { loss, slope } = this.lossAlong(step);
      this.lastStep = step;
      this.lastLoss = loss;
      return { value: loss + (penalty / 2) * (ww + 2 * step * wd + step * step * dd), slope: slope + penalty * (wd + step * dd) };
    };
  }

  advance(step: number, gradient: Float64Array): number {
    const { theta, direction, scores, directionScores } = this;
    for (let i = 0; i < theta.length; i++) theta[i] += step * direction[i];
    // Same expression as a trial step, so the scores equal those the line search evaluated.
    for (let i = 0; i < scores.length; i++) scores[i] = scores[i] + step * directionScores[i];
    const loss = step === this.lastStep ? this.lastLoss : this.lossAlong(0).loss;
    this.lastStep = NaN;
    return this.valueAndGradient(loss, gradient);
  }

  /** f and ∇f at θ, given the mean loss there with `residuals` filled. */
  private valueAndGradient(loss: number, gradient: Float64Array): number {
    const { problem, theta, scoreCount, residuals } = this;
    const n = problem.rows;
    const p = problem.width;
    problem.design.multiplyTransposed(residuals, scoreCount, gradient);
    let penalty = 0;
    for (let j = 0; j < scoreCount * p; j++) {
      gradient[j] = gradient[j] / n + problem.penalty * theta[j];
      penalty += theta[j] * theta[j];
    }
    for (let c = 0; c < scoreCount; c++) {
      let sum = 0;
      for (let i = c; i < residuals.length; i += scoreCount) sum += residuals[i];
      gradient[scoreCount * p + c] = sum / n;
    }
    return loss + (problem.penalty / 2) * penalty;
  }

  private project(parameters: Float64Array, out: Float64Array): void {
    const { problem, scoreCount } = this;
    const p = problem.width;
    problem.design.multiplyRows(parameters.subarray(0, scoreCount * p), parameters.subarray(scoreCount * p), scoreCount, out);
  }
}

/** Rows whose factors (1 + e^{-|t|}) ∈ (1, 2] are multiplied before one logarithm; 2^64 cannot overflow. */
const LOG_BLOCK = 64;

class BinaryLogLoss extends LinearLogLoss {
  constructor(problem: LogisticProblem) {
    super(problem, 1);
  }

  protected lossAlong(step: number): { loss: number; slope: number } {
    const { classOf, classWeights, rows } = this.problem;
    const { scores, directionScores, residuals } = this;
    const [w0, w1] = classWeights;
    // ℓ(t) = log(1 + e^t) − y·t = max(±t, 0) + log(1 + e^{-|t|}) and σ(t), from one exponential.
    // The logarithms of a block of rows of one class are taken once, of the product of their
    // factors: Σ log d_i = log Π d_i, with d_i ∈ (1, 2] so the product stays far from overflow.
    let margins0 = 0;
    let margins1 = 0;
    let logs0 = 0;
    let logs1 = 0;
    let product0 = 1;
    let product1 = 1;
    let slope = 0;
    for (let i = 0; i < rows; i++) {
      const u = directionScores[i];
      const t = scores[i] + step * u;
      const e = Math.exp(-Math.abs(t));
      const d = 1 + e;
      const inverse = 1 / d;
      const probability = t >= 0 ? inverse : e * inverse;
      let r: number;
      if (classOf[i] === 1) {
        margins1 += t < 0 ? -t : 0;
        product1 *= d;
        r = w1 * (probability - 1);
      } else {
        margins0 += t > 0 ? t : 0;
        product0 *= d;
        r = w0 * probability;
      }
      residuals[i] = r;
      slope += r * u;
      if ((i + 1) % LOG_BLOCK === 0) {
        logs0 += Math.log(product0);
        logs1 += Math.log(product1);
        product0 = 1;
        product1 = 1;
      }
    }
    logs0 += Math.log(product0);
    logs1 += Math.log(product1);
    const loss = w0 * (margins0 + logs0) + w1 * (margins1 + logs1);
    return { loss: loss / rows, slope: slope / rows };
  }
}

class SoftmaxLogLoss extends LinearLogLoss {
  constructor(problem: LogisticProblem) {
    super(problem, problem.classCount);
  }

  protected lossAlong(step: number): { loss: number; slope: number } {
    const { classOf, classWeights, rows } = this.problem;
    const k = this.scoreCount;
    const { scores, directionScores, residuals } = this;
    let loss = 0;
    let slope = 0;
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
        sum += e;
        residuals[o + c] = e;
      }
      const y = classOf[i];
      const s = classWeights[y];
      const t = scores[o + y] + step * directionScores[o + y];
      loss += s * (largest + Math.log(sum) - t);
      for (let c = 0; c < k; c++) {
        const r = s * (residuals[o + c] / sum - (c === y ? 1 : 0));
        residuals[o + c] = r;
        slope += r * directionScores[o + c];
      }
    }
    return { loss: loss / rows, slope: slope / rows };
  }
}
