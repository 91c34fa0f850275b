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
  const scoreCount = problem.classCount === 2 ? 1 : problem.classCount;
  const p = problem.width;
  const { design } = problem;
  const map: ScoreMap = {
    size: scoreCount * (p + 1),
    penalised: scoreCount * p,
    project: (parameters, out) => design.multiplyRows(parameters.subarray(0, scoreCount * p), parameters.subarray(scoreCount * p), scoreCount, out),
    pullBack: (residuals, gradient) => {
      design.multiplyTransposed(residuals, scoreCount, gradient);
      interceptGradient(residuals, scoreCount, gradient, scoreCount * p);
    },
  };
  const objective = new LogLossObjective(map, problem.classOf, problem.classCount, problem.classWeights, problem.penalty, (length) => design.buffer(length));
  const result = minimizeLbfgs(objective, new Float64Array(map.size), options);
  return { weights: result.x.slice(0, scoreCount * p), intercepts: result.x.slice(scoreCount * p), optimisation: result };
}

/**
 * The parameter side of a linear log-loss objective: how the parameters θ give the scores
 * Z (rows × scoreCount), and how the residuals r_ic = ∂ℓ_i/∂z_ic give Σ_i Σ_c r_ic·∂z_ic/∂θ_j.
 * The logistic family maps θ = (W, b) through its design matrix; the stacker
 * (aggregator) shares one weight per member across the classes.
 */
export interface ScoreMap {
  readonly size: number;
  /** The first `penalised` parameters carry the (λ/2)·‖·‖² penalty; the rest (intercepts) do not. */
  readonly penalised: number;
  /** out = the scores of `parameters`. */
  project(parameters: Float64Array, out: Float64Array): void;
  /** gradient[j] = Σ_i Σ_c residuals[i·k + c]·∂z_ic/∂θ_j, not yet divided by n. */
  pullBack(residuals: Float64Array, gradient: Float64Array): void;
}

/** gradient[offset + c] = Σ_i residuals[i·k + c]: the pull-back onto free per-class intercepts. */
export function interceptGradient(residuals: Float64Array, scoreCount: number, gradient: Float64Array, offset: number): void {
  for (let c = 0; c < scoreCount; c++) {
    let sum = 0;
    for (let i = c; i < residuals.length; i += scoreCount) sum += residuals[i];
    gradient[offset + c] = sum;
  }
}

/**
 * f(θ) = (1/n) Σ_i s_i·ℓ_i(Z(θ)) + (λ/2)·‖θ_penalised‖² for binary (one score, classCount 2)
 * or softmax log loss. It keeps the scores Z of the current point and, during a line search,
 * U = Z(direction) (Z is linear in θ), so a trial step only needs Z + α·U (O(n·k)) rather
 * than a new projection.
 */
export class LogLossObjective implements LineObjective {
  readonly size: number;
  private readonly scoreCount: number;
  private readonly rows: number;
  private readonly theta: Float64Array;
  private readonly direction: Float64Array;
  private readonly scores: Float64Array;
  private readonly directionScores: Float64Array;
  /** s_i · ∂ℓ_i/∂z_ic at the step of the last `lossAlong` call. */
  private readonly residuals: Float64Array;
  private lastStep = NaN;
  private lastLoss = NaN;

  constructor(
    private readonly map: ScoreMap,
    private readonly classOf: Int32Array,
    classCount: number,
    private readonly classWeights: Float64Array,
    private readonly penalty: number,
    allocate: (length: number) => Float64Array = (length) => new Float64Array(length),
  ) {
    this.scoreCount = classCount === 2 ? 1 : classCount;
    this.rows = classOf.length;
    this.size = map.size;
    this.theta = new Float64Array(this.size);
    this.direction = new Float64Array(this.size);
    this.scores = allocate(this.rows * this.scoreCount);
    this.directionScores = allocate(this.rows * this.scoreCount);
    this.residuals = allocate(this.rows * this.scoreCount);
  }

  evaluate(x: Float64Array, gradient: Float64Array): number {
    this.theta.set(x);
    this.map.project(this.theta, this.scores);
    return this.valueAndGradient(this.lossAlong(0).loss, gradient);
  }

  along(direction: Float64Array): LineFunction {
    this.direction.set(direction);
    this.map.project(direction, this.directionScores);
    let ww = 0;
    let wd = 0;
    let dd = 0;
    for (let j = 0; j < this.map.penalised; j++) {
      ww += this.theta[j] * this.theta[j];
      wd += this.theta[j] * direction[j];
      dd += direction[j] * direction[j];
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
    for (let i = 0; i < theta.length; i++) theta[i] += step * direction[i];
    // Same expression as a trial step, so the scores equal those the line search evaluated.
    for (let i = 0; i < scores.length; i++) scores[i] = scores[i] + step * directionScores[i];
    const loss = step === this.lastStep ? this.lastLoss : this.lossAlong(0).loss;
    this.lastStep = NaN;
    return this.valueAndGradient(loss, gradient);
  }

  /** f and ∇f at θ, given the mean loss there with `residuals` filled. */
  private valueAndGradient(loss: number, gradient: Float64Array): number {
    const { theta, rows } = this;
    this.map.pullBack(this.residuals, gradient);
    for (let j = 0; j < this.size; j++) gradient[j] /= rows;
    let squares = 0;
    for (let j = 0; j < this.map.penalised; j++) {
      gradient[j] += this.penalty * theta[j];
      squares += theta[j] * theta[j];
    }
    return loss + (this.penalty / 2) * squares;
  }

  /** Mean weighted loss at Z + step·U and Σ_i Σ_c r_ic·u_ic / n; fills `residuals` there. */
  private lossAlong(step: number): { loss: number; slope: number } {
    const { scores, directionScores, residuals, classOf, classWeights, scoreCount } = this;
    return scoreCount === 1
      ? binaryLossAlong(scores, directionScores, residuals, classOf, classWeights, step)
      : softmaxLossAlong(scores, directionScores, residuals, classOf, classWeights, scoreCount, step);
  }
}

/** Rows whose factors (1 + e^{-|t|}) ∈ (1, 2] are multiplied before one logarithm; 2^64 cannot overflow. */
const LOG_BLOCK = 64;

function binaryLossAlong(scores: Float64Array, directionScores: Float64Array, residuals: Float64Array, classOf: Int32Array, classWeights: Float64Array, step: number): { loss: number; slope: number } {
  const rows = classOf.length;
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

function softmaxLossAlong(scores: Float64Array, directionScores: Float64Array, residuals: Float64Array, classOf: Int32Array, classWeights: Float64Array, k: number, step: number): { loss: number; slope: number } {
  const rows = classOf.length;
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
