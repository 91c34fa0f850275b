import { createRng } from "@nightshift/core";
import { describe, expect, it } from "vitest";
import { createLinearKernels } from "../src/linear/linear-kernels.js";
import { multiplyRows, multiplyTransposed } from "../src/linear/matrix-products.js";

describe("SIMD products of the logistic fit", () => {
  // Odd sizes exercise the padding of rows (to a multiple of 4) and columns (to an even stride).
  for (const [n, p, k] of [
    [1001, 7, 1],
    [37, 30, 3],
    [5, 1, 2],
  ]) {
    it(`equal the plain products (n=${n}, p=${p}, k=${k})`, () => {
      const rng = createRng("kernels", n, p, k);
      const x = Float64Array.from({ length: n * p }, () => rng.normal());
      const kernels = createLinearKernels(n, p, k, 2);
      for (let i = 0; i < n; i++) kernels.x.set(x.subarray(i * p, (i + 1) * p), i * kernels.stride);
      const weights = Float64Array.from({ length: k * p }, () => rng.normal());
      const intercepts = Float64Array.from({ length: k }, () => rng.normal());

      const scores = kernels.buffer(n * k);
      const plainScores = new Float64Array(n * k);
      kernels.multiplyRows(weights, intercepts, k, scores);
      multiplyRows(x, n, p, weights, intercepts, k, plainScores);
      for (let i = 0; i < n * k; i++) expect(scores[i]).toBeCloseTo(plainScores[i], 12);

      const gradient = new Float64Array(k * p);
      const plainGradient = new Float64Array(k * p);
      kernels.multiplyTransposed(scores, k, gradient);
      multiplyTransposed(x, n, p, plainScores, k, plainGradient);
      for (let j = 0; j < k * p; j++) expect(gradient[j]).toBeCloseTo(plainGradient[j], 9);
    });
  }
});
