import { describe, expect, it } from "vitest";
import { minimizeLbfgs, strongWolfeSearch, type LineObjective } from "../src/linear/index.js";

/** A plain function with its gradient, seen through the line interface L-BFGS uses. */
function lineObjective(size: number, f: (x: Float64Array, g: Float64Array) => number): LineObjective {
  let current = new Float64Array(size);
  let direction = new Float64Array(size);
  const trial = new Float64Array(size);
  const gradient = new Float64Array(size);
  return {
    size,
    evaluate(x, g) {
      current = Float64Array.from(x);
      return f(current, g);
    },
    along(d) {
      direction = Float64Array.from(d);
      return (step) => {
        for (let i = 0; i < size; i++) trial[i] = current[i] + step * direction[i];
        const value = f(trial, gradient);
        let slope = 0;
        for (let i = 0; i < size; i++) slope += gradient[i] * direction[i];
        return { value, slope };
      };
    },
    advance(step, g) {
      for (let i = 0; i < size; i++) current[i] += step * direction[i];
      return f(current, g);
    },
  };
}

// Rosenbrock (1960): minimum 0 at (1, 1, ..., 1); a narrow curved valley that defeats steepest descent.
const rosenbrock = (x: Float64Array, g: Float64Array): number => shiftedRosenbrock(x, g, 1);

/** The same valley with its two-dimensional minimum at (a, a²). */
function shiftedRosenbrock(x: Float64Array, g: Float64Array, centre: number): number {
  let value = 0;
  g.fill(0);
  for (let i = 0; i + 1 < x.length; i++) {
    const a = x[i + 1] - x[i] * x[i];
    const b = centre - x[i];
    value += 100 * a * a + b * b;
    g[i] += -400 * x[i] * a - 2 * b;
    g[i + 1] += 200 * a;
  }
  return value;
}

describe("L-BFGS (Nocedal & Wright Algorithm 7.5)", () => {
  it("finds the minimum of the Rosenbrock function from the classic start (-1.2, 1)", () => {
    const result = minimizeLbfgs(lineObjective(2, rosenbrock), Float64Array.of(-1.2, 1), { maxIterations: 200, tolerance: 1e-10 });
    expect(result.converged).toBe(true);
    expect(result.x[0]).toBeCloseTo(1, 7);
    expect(result.x[1]).toBeCloseTo(1, 7);
    expect(result.iterations).toBeLessThan(60);
  });

  it("solves a 10-dimensional Rosenbrock function", () => {
    const start = new Float64Array(10).fill(-1);
    const result = minimizeLbfgs(lineObjective(10, rosenbrock), start, { maxIterations: 500, tolerance: 1e-10 });
    for (const v of result.x) expect(v).toBeCloseTo(1, 6);
  });

  it("stops at the iteration limit and says it did not converge", () => {
    const result = minimizeLbfgs(lineObjective(2, rosenbrock), Float64Array.of(-1.2, 1), { maxIterations: 3, tolerance: 1e-10 });
    expect(result.iterations).toBe(3);
    expect(result.converged).toBe(false);
  });

  it("stops when no step decreases the function any more, long before the iteration limit", () => {
    // A bowl with a fine ripple: its many tiny local minima stop the descent at a point where the
    // unreachable tolerance is not met, and no step along the quasi-Newton direction helps.
    const f = (x: Float64Array, g: Float64Array) => {
      let value = 0;
      for (let i = 0; i < x.length; i++) {
        value += (x[i] - 0.3) ** 2 + 1e-13 * Math.sin(1e7 * x[i]);
        g[i] = 2 * (x[i] - 0.3) + 1e-6 * Math.cos(1e7 * x[i]);
      }
      return value;
    };
    const result = minimizeLbfgs(lineObjective(3, f), Float64Array.of(4, -2, 7), { maxIterations: 100_000, tolerance: 1e-300 });
    expect(result.converged).toBe(false);
    expect(result.iterations).toBeLessThan(100);
    for (const v of result.x) expect(v).toBeCloseTo(0.3, 5);
  });

  it("takes steps that satisfy the strong Wolfe conditions", () => {
    // φ(α) = (α - 3)² along a line: slope at 0 is -6.
    const phi = (a: number) => ({ value: (a - 3) ** 2, slope: 2 * (a - 3) });
    const result = strongWolfeSearch(phi, phi(0), 1);
    expect(result.wolfe).toBe(true);
    expect(result.value).toBeLessThanOrEqual(9 + 1e-4 * result.step * -6);
    expect(Math.abs(result.slope)).toBeLessThanOrEqual(0.9 * 6);
  });
});
