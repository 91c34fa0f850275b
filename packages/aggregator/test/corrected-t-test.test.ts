import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { correctedPairedTTest, tiesWithBest } from "../src/corrected-t-test.js";
import { logGamma, regularizedIncompleteBeta, studentTCdf, studentTSurvival } from "../src/student-t.js";

interface Reference {
  versions: Record<string, string>;
  student_t: { df: number; t: number; cdf: number; sf: number }[];
  incomplete_beta: { a: number; b: number; x: number; value: number }[];
  corrected_t_test: {
    a: number[];
    b: number[];
    test_fraction: number;
    mean_difference: number;
    t: number;
    df: number;
    p_value: number;
  }[];
}

const reference = JSON.parse(
  readFileSync(new URL("../../../test/reference/metrics_reference.json", import.meta.url), "utf8"),
) as Reference;
const source = `computed by test/reference/metrics_reference.py with scipy ${reference.versions.scipy}`;

/** Relative 1e-9, or absolute 1e-15 for values near zero. */
function expectClose(actual: number, expected: number, what: string): void {
  if (!(Math.abs(actual - expected) <= Math.max(1e-9 * Math.abs(expected), 1e-15))) {
    throw new Error(`${what}: got ${actual}, expected ${expected} (${source})`);
  }
}

// METHODS.md §4 worked example (computed with scipy): 10-fold CV on n = 1000.
const differences = Float64Array.from([0.012, 0.02, -0.004, 0.015, 0.008, 0.011, 0.003, 0.017, 0.009, 0.006]);
const zeros = new Float64Array(10);

describe("Student t distribution via the regularized incomplete beta function", () => {
  it("knows ln Γ at points with closed forms", () => {
    expect(logGamma(0.5)).toBeCloseTo(0.5 * Math.log(Math.PI), 14); // Γ(½) = √π
    expect(logGamma(1)).toBeCloseTo(0, 14);
    expect(logGamma(10)).toBeCloseTo(Math.log(362880), 13); // Γ(10) = 9!
    expect(logGamma(0.25)).toBeCloseTo(Math.log(3.625609908221908), 13); // Γ(¼), from memory
  });

  it(`matches scipy.special.betainc (${source})`, () => {
    for (const { a, b, x, value } of reference.incomplete_beta) {
      expectClose(regularizedIncompleteBeta(a, b, x), value, `I_${x}(${a}, ${b})`);
    }
  });

  it(`matches scipy.stats.t cdf and sf across degrees of freedom and tails (${source})`, () => {
    expect(reference.student_t.length).toBeGreaterThan(100);
    for (const { df, t, cdf, sf } of reference.student_t) {
      expectClose(studentTCdf(t, df), cdf, `cdf(${t}; ${df})`);
      expectClose(studentTSurvival(t, df), sf, `sf(${t}; ${df})`);
    }
  });

  it("is symmetric and rejects a non-positive degree of freedom", () => {
    expect(studentTCdf(0, 7)).toBe(0.5);
    expect(studentTCdf(-1.3, 4) + studentTCdf(1.3, 4)).toBeCloseTo(1, 15);
    expect(() => studentTCdf(1, 0)).toThrow(RangeError);
    expect(() => regularizedIncompleteBeta(1, 1, 1.5)).toThrow(RangeError);
  });
});

describe("corrected resampled t-test (Nadeau & Bengio 2003; Bouckaert & Frank 2004)", () => {
  it("reproduces the METHODS.md §4 worked example, corrected and naive", () => {
    const corrected = correctedPairedTTest(differences, zeros, 100 / 900);
    // METHODS.md §4, computed with scipy: d̄ = 0.0097, corrected t = 3.005, df 9, p = 0.0148.
    expect(corrected.meanDifference).toBeCloseTo(0.0097, 15);
    expect(corrected.t).toBeCloseTo(3.005, 3);
    expect(corrected.df).toBe(9);
    expect(corrected.pValue).toBeCloseTo(0.0148, 4);
    const naive = correctedPairedTTest(differences, zeros, 0);
    // Same source: naive paired t = 4.367, two-sided p = 0.0018.
    expect(naive.t).toBeCloseTo(4.367, 3);
    expect(naive.pValue).toBeCloseTo(0.0018, 4);
  });

  it(`matches NumPy/scipy on random fold scores (${source})`, () => {
    for (const c of reference.corrected_t_test) {
      const result = correctedPairedTTest(Float64Array.from(c.a), Float64Array.from(c.b), c.test_fraction);
      const what = `${c.a.length} folds, fraction ${c.test_fraction}`;
      expectClose(result.meanDifference, c.mean_difference, `${what} mean`);
      expectClose(result.t, c.t, `${what} t`);
      expect(result.df).toBe(c.df);
      expectClose(result.pValue, c.p_value, `${what} p`);
    }
  });

  it("handles degenerate differences", () => {
    const same = Float64Array.from([0.8, 0.7, 0.9]);
    expect(correctedPairedTTest(same, same, 0.25)).toEqual({ meanDifference: 0, t: 0, df: 2, pValue: 1 });
    const shifted = correctedPairedTTest(Float64Array.from([1, 2, 3]), Float64Array.from([0.5, 1.5, 2.5]), 0.25);
    expect(shifted.t).toBe(Infinity);
    expect(shifted.pValue).toBe(0);
    expect(correctedPairedTTest(Float64Array.from([1]), Float64Array.from([0]), 0.25).pValue).toBeNaN();
    expect(() => correctedPairedTTest(Float64Array.from([1, 2]), Float64Array.from([1]), 0.25)).toThrow(RangeError);
  });
});

describe("ties with the best trial", () => {
  const best = Float64Array.from(differences, (d) => 0.8 + d);
  const baseline = Float64Array.from(zeros, () => 0.8);

  it("marks a trial significantly worse as not tied, and a close one as tied", () => {
    // Worked example: best − baseline has p = 0.0148 corrected → not tied at 0.05, tied at 0.01.
    const scores = [best, baseline];
    expect(tiesWithBest(scores, 0, "max", 1 / 9)).toEqual([true, false]);
    expect(tiesWithBest(scores, 0, "max", 1 / 9, 0.01)).toEqual([true, true]);
    const noisy = Float64Array.from(best, (s, f) => s + (f % 2 === 0 ? 0.004 : -0.005));
    expect(tiesWithBest([best, noisy], 0, "max", 1 / 9)).toEqual([true, true]);
  });

  it("uses the direction: under a loss the lower scores are better", () => {
    // As losses, the baseline is significantly lower (better) than "best" on every fold: not worse → tied;
    // and with the baseline as best, the higher-loss trial is significantly worse → not tied.
    expect(tiesWithBest([best, baseline], 0, "min", 1 / 9)).toEqual([true, true]);
    expect(tiesWithBest([best, baseline], 1, "min", 1 / 9)).toEqual([false, true]);
  });

  it("compares on shared folds only; fewer than two shared folds counts as tied", () => {
    const early = baseline.slice(0, 1);
    const missing = Float64Array.from(baseline);
    missing[3] = Number.NaN;
    const result = tiesWithBest([best, early, missing, baseline.slice(0, 10)], 0, "max", 1 / 9);
    expect(result[1]).toBe(true);
    const onNine = correctedPairedTTest(
      Float64Array.from([...missing].filter((_, f) => f !== 3)),
      Float64Array.from([...best].filter((_, f) => f !== 3)),
      1 / 9,
    );
    expect(result[2]).toBe(!(onNine.pValue < 0.05));
    expect(result[3]).toBe(false);
    expect(() => tiesWithBest([best], 1, "max", 1 / 9)).toThrow(RangeError);
  });
});
