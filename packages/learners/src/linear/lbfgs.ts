import { strongWolfeSearch, type LineFunction } from "./line-search.js";

/**
 * A smooth function to minimise, evaluated along lines: the linear models restrict themselves to
 * a line through precomputed products X·d, so a trial step costs O(n) instead of a matrix product.
 */
export interface LineObjective {
  readonly size: number;
  /** Makes `x` the current point; returns f(x) and writes ∇f(x) into `gradient`. */
  evaluate(x: Float64Array, gradient: Float64Array): number;
  /** φ(α) = f(current + α·direction) with its derivative. */
  along(direction: Float64Array): LineFunction;
  /** Moves the current point to current + step·direction (the last `along`); returns f and writes the gradient. */
  advance(step: number, gradient: Float64Array): number;
}

export interface LbfgsOptions {
  readonly maxIterations: number;
  /** Stop when ‖∇f‖∞ ≤ tolerance · ‖∇f(x0)‖∞. */
  readonly tolerance: number;
  /** Number of correction pairs kept (m in Nocedal & Wright; 3 to 20 is common). */
  readonly memory?: number;
}

export interface LbfgsResult {
  readonly x: Float64Array;
  readonly value: number;
  /** ‖∇f‖∞ at `x`. */
  readonly gradientNorm: number;
  readonly iterations: number;
  readonly evaluations: number;
  /** Whether the gradient criterion was met (else the iteration limit or the line search stopped it). */
  readonly converged: boolean;
}

/**
 * Limited-memory BFGS, Nocedal & Wright (2006), Numerical Optimization, 2nd ed.: Algorithm 7.5,
 * with the two-loop recursion of Algorithm 7.4 for H·g, the initial matrix H0 = γI of eq. (7.20)
 * (γ = sᵀy / yᵀy of the newest pair) and steps satisfying the strong Wolfe conditions
 * (Algorithms 3.5/3.6), which keep sᵀy > 0 and so the update positive definite.
 */
export function minimizeLbfgs(objective: LineObjective, x0: Float64Array, options: LbfgsOptions): LbfgsResult {
  const size = objective.size;
  const memory = options.memory ?? 10;
  const x = Float64Array.from(x0);
  let gradient = new Float64Array(size);
  let nextGradient = new Float64Array(size);
  let value = objective.evaluate(x, gradient);
  let evaluations = 1;
  const target = options.tolerance * maxAbs(gradient);

  const s = Array.from({ length: memory }, () => new Float64Array(size));
  const y = Array.from({ length: memory }, () => new Float64Array(size));
  const rho = new Float64Array(memory);
  const alpha = new Float64Array(memory);
  const direction = new Float64Array(size);
  const step = new Float64Array(size);
  const change = new Float64Array(size);
  let stored = 0;
  let newest = -1;
  let iterations = 0;
  let converged = maxAbs(gradient) <= target;

  while (!converged && iterations < options.maxIterations) {
    // Algorithm 7.4: direction = -H·gradient.
    for (let i = 0; i < size; i++) direction[i] = -gradient[i];
    for (let j = 0; j < stored; j++) {
      const slot = (newest - j + memory) % memory;
      alpha[slot] = rho[slot] * dot(s[slot], direction);
      axpy(-alpha[slot], y[slot], direction);
    }
    if (stored > 0) {
      const gamma = dot(s[newest], y[newest]) / dot(y[newest], y[newest]);
      for (let i = 0; i < size; i++) direction[i] *= gamma;
    }
    for (let j = stored - 1; j >= 0; j--) {
      const slot = (newest - j + memory) % memory;
      const beta = rho[slot] * dot(y[slot], direction);
      axpy(alpha[slot] - beta, s[slot], direction);
    }
    let slope = dot(gradient, direction);
    if (!(slope < 0)) {
      // Not a descent direction (only after rounding trouble): restart from steepest descent.
      stored = 0;
      for (let i = 0; i < size; i++) direction[i] = -gradient[i];
      slope = dot(gradient, direction);
    }
    // Without curvature pairs the first step is scaled to unit length (as scipy's L-BFGS-B does).
    const initialStep = stored === 0 ? Math.min(1, 1 / Math.sqrt(dot(gradient, gradient))) : 1;
    const search = strongWolfeSearch(objective.along(direction), { value, slope }, initialStep);
    evaluations += search.evaluations;
    // No step decreases f: at this precision the point cannot be improved.
    if (search.step === 0) break;

    for (let i = 0; i < size; i++) x[i] += search.step * direction[i];
    const nextValue = objective.advance(search.step, nextGradient);
    iterations++;

    let sy = 0;
    let yy = 0;
    for (let i = 0; i < size; i++) {
      step[i] = search.step * direction[i];
      change[i] = nextGradient[i] - gradient[i];
      sy += step[i] * change[i];
      yy += change[i] * change[i];
    }
    // A pair with no positive curvature (possible when the search stopped short of Wolfe) is skipped.
    if (sy > 1e-12 * yy && yy > 0) {
      const slot = (newest + 1) % memory;
      s[slot].set(step);
      y[slot].set(change);
      rho[slot] = 1 / sy;
      newest = slot;
      stored = Math.min(stored + 1, memory);
    }
    value = nextValue;
    [gradient, nextGradient] = [nextGradient, gradient];
    converged = maxAbs(gradient) <= target;
  }
  return { x, value, gradientNorm: maxAbs(gradient), iterations, evaluations, converged };
}

function dot(a: Float64Array, b: Float64Array): number {
  let sum = 0;
  for (let i = 0; i < a.length; i++) sum += a[i] * b[i];
  return sum;
}

function axpy(a: number, x: Float64Array, y: Float64Array): void {
  for (let i = 0; i < x.length; i++) y[i] += a * x[i];
}

function maxAbs(a: Float64Array): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i]));
  return m;
}
