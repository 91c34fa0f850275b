/**
 * Spectral projected gradient for a smooth function on a box, the SPG2 method of Birgin,
 * Martínez & Raydan ("Nonmonotone spectral projected gradient methods on convex sets", SIAM J.
 * Optim. 10(4):1196–1211, 2000): steps along P(x − λ∇f) − x with the Barzilai–Borwein step
 * length λ = sᵀs / sᵀy, accepted by a nonmonotone Armijo test against the largest of the last
 * ten values, backtracking by safeguarded quadratic interpolation. Used for the stacker's
 * non-negative weights, where the box is [0, ∞) for the weights and free for the intercepts.
 */
export interface BoxObjective {
  readonly size: number;
  /** f(x), with ∇f(x) written into `gradient`. */
  evaluate(x: Float64Array, gradient: Float64Array): number;
}

export interface SpgResult {
  readonly x: Float64Array;
  readonly value: number;
  /** ‖P(x − ∇f) − x‖∞ at the end: zero exactly at a stationary point of the box problem. */
  readonly projectedGradient: number;
  readonly iterations: number;
  readonly converged: boolean;
}

const HISTORY = 10;
const SUFFICIENT_DECREASE = 1e-4;
const STEP_MIN = 1e-10;
const STEP_MAX = 1e10;

export function minimizeOnBox(
  objective: BoxObjective,
  x0: Float64Array,
  lower: Float64Array,
  options: { maxIterations: number; tolerance: number },
): SpgResult {
  const n = objective.size;
  const project = (v: Float64Array): void => {
    for (let i = 0; i < n; i++) if (v[i] < lower[i]) v[i] = lower[i];
  };
  const x = Float64Array.from(x0);
  project(x);
  let gradient = new Float64Array(n);
  let value = objective.evaluate(x, gradient);
  const history = new Float64Array(HISTORY).fill(-Infinity);
  history[0] = value;
  const trial = new Float64Array(n);
  let trialGradient = new Float64Array(n);
  const direction = new Float64Array(n);

  const projectedGradientNorm = (): number => {
    let norm = 0;
    for (let i = 0; i < n; i++) norm = Math.max(norm, Math.abs(Math.max(lower[i], x[i] - gradient[i]) - x[i]));
    return norm;
  };
  let projected = projectedGradientNorm();
  const target = options.tolerance * Math.max(1, projected);
  let lambda = projected > 0 ? Math.min(STEP_MAX, Math.max(STEP_MIN, 1 / projected)) : 1;
  let iterations = 0;
  while (projected > target && iterations < options.maxIterations) {
    for (let i = 0; i < n; i++) direction[i] = Math.max(lower[i], x[i] - lambda * gradient[i]) - x[i];
    let slope = 0;
    for (let i = 0; i < n; i++) slope += gradient[i] * direction[i];
    let reference = -Infinity;
    for (const h of history) reference = Math.max(reference, h);
    let alpha = 1;
    let trialValue: number;
    for (let backtracks = 0; ; backtracks++) {
      for (let i = 0; i < n; i++) trial[i] = x[i] + alpha * direction[i];
      trialValue = objective.evaluate(trial, trialGradient);
      if (trialValue <= reference + SUFFICIENT_DECREASE * alpha * slope || backtracks >= 60) break;
      const interpolated = (-0.5 * alpha * alpha * slope) / (trialValue - value - alpha * slope);
      alpha = interpolated >= 0.1 * alpha && interpolated <= 0.9 * alpha ? interpolated : alpha / 2;
    }
    let ss = 0;
    let sy = 0;
    for (let i = 0; i < n; i++) {
      const s = trial[i] - x[i];
      ss += s * s;
      sy += s * (trialGradient[i] - gradient[i]);
    }
    x.set(trial);
    [gradient, trialGradient] = [trialGradient, gradient];
    value = trialValue;
    iterations++;
    history[iterations % HISTORY] = value;
    lambda = sy > 0 ? Math.min(STEP_MAX, Math.max(STEP_MIN, ss / sy)) : STEP_MAX;
    projected = projectedGradientNorm();
    if (ss === 0) break;
  }
  return { x, value, projectedGradient: projected, iterations, converged: projected <= target };
}
