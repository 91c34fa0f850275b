/**
 * Losses boosted by second-order trees (Chen & Guestrin 2016; METHODS.md §6). Raw scores are
 * row-major, `outputs` per row; gradients and hessians are class-major (`g[k * n + i]`) so the
 * tree of output k reads one contiguous block. Rows are positions 0..n-1 of the training view.
 */
export interface Objective {
  /** Raw scores per row: 1 for binary and regression, the class count for softmax. */
  readonly outputs: number;
  /** True when every row's hessian is its weight alone (squared error): histograms can skip it. */
  readonly constantHessian: boolean;
  /** The best constant raw scores on the given rows (the boosting start F_0). */
  initialScores(positions: Uint32Array): Float64Array;
  /** Per-row first and second derivatives of the loss at the current raw scores. */
  gradients(raw: Float64Array, positions: Uint32Array, grad: Float64Array, hess: Float64Array): void;
  /** Weighted mean loss on the given rows (early stopping watches it on the validation slice). */
  loss(raw: Float64Array, positions: Uint32Array): number;
}

/** ln(1 + e^x) without overflow. */
function softplus(x: number): number {
  return x > 0 ? x + Math.log1p(Math.exp(-x)) : Math.log1p(Math.exp(x));
}

/**
 * Binary log loss ℓ = ln(1 + e^F) − yF; g = p − y, h = p(1 − p) with p = σ(F); F_0 = log-odds of
 * the (weighted) prior. Rows carry optional weights (class_weight), multiplying g, h and ℓ.
 */
export function binaryLogLoss(classes: Int32Array, weights: Float64Array | null): Objective {
  return {
    outputs: 1,
    constantHessian: false,
    initialScores(positions) {
      let positive = 0;
      let total = 0;
      for (let i = 0; i < positions.length; i++) {
        const r = positions[i];
        const w = weights === null ? 1 : weights[r];
        total += w;
        if (classes[r] === 1) positive += w;
      }
      const prior = positive / total;
      return Float64Array.of(Math.log(prior / (1 - prior)));
    },
    gradients(raw, positions, grad, hess) {
      for (let i = 0; i < positions.length; i++) {
        const r = positions[i];
        const p = 1 / (1 + Math.exp(-raw[r]));
        const w = weights === null ? 1 : weights[r];
        grad[r] = w * (p - classes[r]);
        hess[r] = w * p * (1 - p);
      }
    },
    loss(raw, positions) {
      let sum = 0;
      let total = 0;
      for (let i = 0; i < positions.length; i++) {
        const r = positions[i];
        const w = weights === null ? 1 : weights[r];
        sum += w * (softplus(raw[r]) - classes[r] * raw[r]);
        total += w;
      }
      return sum / total;
    },
  };
}

/**
 * Softmax (multinomial log loss) over `classCount` raw scores per row, one tree per class per
 * round: g_k = p_k − [y = k], diagonal hessian h_k = p_k(1 − p_k); F_0 = log of the class priors
 * (a class absent from the fitting rows starts at ln 1e-15 rather than −∞).
 */
export function softmaxLoss(classes: Int32Array, classCount: number, weights: Float64Array | null, n: number): Objective {
  const probabilities = new Float64Array(classCount);
  return {
    outputs: classCount,
    constantHessian: false,
    initialScores(positions) {
      const mass = new Float64Array(classCount);
      let total = 0;
      for (let i = 0; i < positions.length; i++) {
        const r = positions[i];
        const w = weights === null ? 1 : weights[r];
        mass[classes[r]] += w;
        total += w;
      }
      return mass.map((m) => Math.log(Math.max(m / total, 1e-15)));
    },
    gradients(raw, positions, grad, hess) {
      const k = classCount;
      for (let i = 0; i < positions.length; i++) {
        const r = positions[i];
        const base = r * k;
        let top = -Infinity;
        for (let c = 0; c < k; c++) top = Math.max(top, raw[base + c]);
        let sum = 0;
        for (let c = 0; c < k; c++) sum += probabilities[c] = Math.exp(raw[base + c] - top);
        const w = weights === null ? 1 : weights[r];
        const y = classes[r];
        for (let c = 0; c < k; c++) {
          const p = probabilities[c] / sum;
          grad[c * n + r] = w * (p - (c === y ? 1 : 0));
          hess[c * n + r] = w * p * (1 - p);
        }
      }
    },
    loss(raw, positions) {
      const k = classCount;
      let total = 0;
      let sum = 0;
      for (let i = 0; i < positions.length; i++) {
        const r = positions[i];
        const base = r * k;
        let top = -Infinity;
        for (let c = 0; c < k; c++) top = Math.max(top, raw[base + c]);
        let exps = 0;
        for (let c = 0; c < k; c++) exps += Math.exp(raw[base + c] - top);
        const w = weights === null ? 1 : weights[r];
        sum += w * (top + Math.log(exps) - raw[base + classes[r]]);
        total += w;
      }
      return sum / total;
    },
  };
}

/** Squared error ℓ = ½(F − y)²: g = F − y, h = 1; F_0 = mean of y. The loss reported is the mean of (F − y)². */
export function squaredError(values: Float64Array): Objective {
  return {
    outputs: 1,
    constantHessian: true,
    initialScores(positions) {
      let sum = 0;
      for (let i = 0; i < positions.length; i++) sum += values[positions[i]];
      return Float64Array.of(sum / positions.length);
    },
    gradients(raw, positions, grad, hess) {
      for (let i = 0; i < positions.length; i++) {
        const r = positions[i];
        grad[r] = raw[r] - values[r];
        hess[r] = 1;
      }
    },
    loss(raw, positions) {
      let sum = 0;
      for (let i = 0; i < positions.length; i++) {
        const d = raw[positions[i]] - values[positions[i]];
        sum += d * d;
      }
      return sum / positions.length;
    },
  };
}
