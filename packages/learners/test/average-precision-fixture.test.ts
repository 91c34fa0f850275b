import { describe, expect, it } from "vitest";
import { averagePrecision } from "./linear-knn-fixtures.js";

describe("the test helper's average precision", () => {
  it("matches scikit-learn's documented examples", () => {
    // scikit-learn docstring of average_precision_score (METHODS.md §5 example 1): 0.8333.
    expect(averagePrecision([false, false, true, true], [0.1, 0.4, 0.35, 0.8])).toBeCloseTo(5 / 6, 12);
    // METHODS.md §5 example 9 (computed with scikit-learn 1.9.1): tied scores form one threshold.
    expect(averagePrecision([false, true, false, true], [0.5, 0.5, 0.2, 0.9])).toBeCloseTo(5 / 6, 12);
  });
});
