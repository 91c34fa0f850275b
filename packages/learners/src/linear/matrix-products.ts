/**
 * Products of a dense row-major design matrix X (n rows × p columns) with the weights of k linear
 * scores, in plain JavaScript: for predictions, and for fits too large for the WebAssembly
 * kernels of linear-kernels.ts. The order of every sum is fixed, so results are identical on
 * every run.
 */

/**
 * scores[i·k + c] = x_i · weights[c·p .. c·p + p) + intercepts[c]. Four rows share each load of
 * a weight and give four independent sums.
 */
export function multiplyRows(
  x: Float64Array,
  n: number,
  p: number,
  weights: Float64Array,
  intercepts: Float64Array,
  k: number,
  scores: Float64Array,
): void {
  let i = 0;
  for (; i + 3 < n; i += 4) {
    const row0 = i * p;
    const row1 = row0 + p;
    const row2 = row1 + p;
    const row3 = row2 + p;
    for (let c = 0, w = 0; c < k; c++, w += p) {
      let s0 = 0;
      let s1 = 0;
      let s2 = 0;
      let s3 = 0;
      for (let j = 0; j < p; j++) {
        const wj = weights[w + j];
        s0 += x[row0 + j] * wj;
        s1 += x[row1 + j] * wj;
        s2 += x[row2 + j] * wj;
        s3 += x[row3 + j] * wj;
      }
      const b = intercepts[c];
      scores[i * k + c] = s0 + b;
      scores[(i + 1) * k + c] = s1 + b;
      scores[(i + 2) * k + c] = s2 + b;
      scores[(i + 3) * k + c] = s3 + b;
    }
  }
  for (; i < n; i++) {
    const row = i * p;
    for (let c = 0, w = 0; c < k; c++, w += p) {
      let s = 0;
      for (let j = 0; j < p; j++) s += x[row + j] * weights[w + j];
      scores[i * k + c] = s + intercepts[c];
    }
  }
}

/**
 * out[c·p + j] = Σ_i residuals[i·k + c] · x[i·p + j] (Xᵀ·R for k columns of residuals); out is
 * overwritten. Rows are taken four at a time so each output element is loaded and stored once
 * per four rows.
 */
export function multiplyTransposed(x: Float64Array, n: number, p: number, residuals: Float64Array, k: number, out: Float64Array): void {
  out.fill(0, 0, k * p);
  let i = 0;
  for (; i + 3 < n; i += 4) {
    const row0 = i * p;
    const row1 = row0 + p;
    const row2 = row1 + p;
    const row3 = row2 + p;
    for (let c = 0, o = 0; c < k; c++, o += p) {
      const r0 = residuals[i * k + c];
      const r1 = residuals[(i + 1) * k + c];
      const r2 = residuals[(i + 2) * k + c];
      const r3 = residuals[(i + 3) * k + c];
      for (let j = 0; j < p; j++) out[o + j] += r0 * x[row0 + j] + r1 * x[row1 + j] + (r2 * x[row2 + j] + r3 * x[row3 + j]);
    }
  }
  for (; i < n; i++) {
    const row = i * p;
    for (let c = 0, o = 0; c < k; c++, o += p) {
      const r = residuals[i * k + c];
      for (let j = 0; j < p; j++) out[o + j] += r * x[row + j];
    }
  }
}
