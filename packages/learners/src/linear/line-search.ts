/**
 * Line search for the strong Wolfe conditions, Nocedal & Wright (2006), Numerical Optimization,
 * 2nd ed., Algorithm 3.5 (bracketing) and Algorithm 3.6 (zoom), with the safeguarded cubic
 * interpolation of their eq. (3.59) to pick trial steps.
 */

/** φ(α) = f(x + α·d) and its derivative φ'(α) = ∇f(x + α·d)·d. */
export interface LinePoint {
  readonly value: number;
  readonly slope: number;
}
export type LineFunction = (step: number) => LinePoint;

export interface LineSearchResult {
  /** The accepted step; 0 when no step decreased the function. */
  readonly step: number;
  readonly value: number;
  readonly slope: number;
  readonly evaluations: number;
  /** Whether the step satisfies both strong Wolfe conditions (else it only decreases the function). */
  readonly wolfe: boolean;
}

/** c1 and c2 of the strong Wolfe conditions; 1e-4 and 0.9 are N&W's suggestions for quasi-Newton methods. */
const SUFFICIENT_DECREASE = 1e-4;
const CURVATURE = 0.9;
const MAX_EVALUATIONS = 40;
const EXTRAPOLATION = 4;
const MAX_STEP = 1e20;

export function strongWolfeSearch(phi: LineFunction, start: LinePoint, initialStep: number): LineSearchResult {
  const f0 = start.value;
  const g0 = start.slope;
  let evaluations = 0;
  const armijo = (step: number, value: number): boolean => value <= f0 + SUFFICIENT_DECREASE * step * g0;
  const curvature = (slope: number): boolean => Math.abs(slope) <= -CURVATURE * g0;

  // Best point seen that decreases f, returned if the search runs out of evaluations.
  let best = { step: 0, value: f0, slope: g0 };
  const evaluate = (step: number): LinePoint => {
    const point = phi(step);
    evaluations++;
    if (Number.isFinite(point.value) && point.value < best.value) best = { step, value: point.value, slope: point.slope };
    return point;
  };
  const done = (step: number, point: LinePoint): LineSearchResult => ({ step, value: point.value, slope: point.slope, evaluations, wolfe: true });
  const giveUp = (): LineSearchResult => ({ ...best, evaluations, wolfe: false });

  const zoom = (lo: number, loPoint: LinePoint, hi: number, hiPoint: LinePoint): LineSearchResult => {
    while (evaluations < MAX_EVALUATIONS) {
      const width = Math.abs(hi - lo);
      if (width <= 1e-16 * Math.max(1, Math.abs(lo))) break;
      const step = cubicMinimizer(lo, loPoint, hi, hiPoint, 0.1);
      const point = evaluate(step);
      if (!Number.isFinite(point.value) || !armijo(step, point.value) || point.value >= loPoint.value) {
        hi = step;
        hiPoint = point;
      } else {
        if (curvature(point.slope)) return done(step, point);
        if (point.slope * (hi - lo) >= 0) {
          hi = lo;
          hiPoint = loPoint;
        }
        lo = step;
        loPoint = point;
      }
    }
    return giveUp();
  };

  let previous = 0;
  let previousPoint: LinePoint = start;
  let step = initialStep;
  while (evaluations < MAX_EVALUATIONS) {
    const point = evaluate(step);
    if (!Number.isFinite(point.value) || !armijo(step, point.value) || (evaluations > 1 && point.value >= previousPoint.value))
      return zoom(previous, previousPoint, step, point);
    if (curvature(point.slope)) return done(step, point);
    if (point.slope >= 0) return zoom(step, point, previous, previousPoint);
    previous = step;
    previousPoint = point;
    step = Math.min(step * EXTRAPOLATION, MAX_STEP);
  }
  return giveUp();
}

/**
 * Minimiser of the cubic through (a, φ(a), φ'(a)) and (b, φ(b), φ'(b)), N&W eq. (3.59), kept at
 * least `margin`·|b - a| away from both ends; the midpoint when the cubic has no usable minimiser.
 */
export function cubicMinimizer(a: number, pa: LinePoint, b: number, pb: LinePoint, margin: number): number {
  const lo = Math.min(a, b);
  const hi = Math.max(a, b);
  const guard = margin * (hi - lo);
  const mid = (a + b) / 2;
  if (!Number.isFinite(pa.value) || !Number.isFinite(pb.value) || !Number.isFinite(pa.slope) || !Number.isFinite(pb.slope)) return mid;
  const d1 = pa.slope + pb.slope - (3 * (pa.value - pb.value)) / (a - b);
  const discriminant = d1 * d1 - pa.slope * pb.slope;
  if (!(discriminant >= 0)) return mid;
  const d2 = Math.sign(b - a) * Math.sqrt(discriminant);
  const denominator = pb.slope - pa.slope + 2 * d2;
  if (denominator === 0) return mid;
  const step = b - (b - a) * ((pb.slope + d2 - d1) / denominator);
  if (!Number.isFinite(step) || step < lo + guard || step > hi - guard) return mid;
  return step;
}
