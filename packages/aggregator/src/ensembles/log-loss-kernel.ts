import { LOG_LOSS_EPSILON } from "@nightshift/core";
import { encodeModule, F64, FunctionBody, I32, instantiate } from "@nightshift/learners";

/** Clipped probabilities multiplied before one logarithm: ε^16 ≈ 3e-251 cannot underflow. */
export const LOG_RUN = 16;

/**
 * Binary log loss of an averaged prediction, its per-row loop in WebAssembly: for every row,
 * q = (sum + candidate) / divisor, p = q for a positive row and 1 − q for a negative one,
 * clipped to [ε, 1 − ε] as scikit-learn's `log_loss` (ε = float64 machine epsilon), and the
 * products of runs of 16 such p written out; JavaScript then adds Math.log of each product in
 * order. The arithmetic is IEEE 754 double arithmetic as in JavaScript (min/max clipping equals
 * the two comparisons for every non-NaN p, and both keep NaN), so the result equals the same
 * loop written in JavaScript bit for bit, at about a quarter of its time.
 *
 * Memory: sum f64 × n | candidate f32 × n | positive u8 × n | products f64 × (⌈n / 16⌉ + 1).
 */
export interface LogLossKernel {
  readonly sum: Float64Array;
  readonly candidate: Float32Array;
  /** −(1/n)·Σ ln p over the rows, for (sum + candidate) / divisor (or sum / divisor). */
  logLoss(withCandidate: boolean, divisor: number): number;
}

const cache: { compiled?: object } = {};

function productsFunction(withCandidate: boolean): FunctionBody {
  // Parameters: sum, candidate, positive, products (byte offsets), n, divisor. Locals: row, run, out, product, q.
  const [SUM, CANDIDATE, POSITIVE, PRODUCTS, ROWS, DIVISOR, ROW, RUN, OUT, PRODUCT, Q] = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10];
  const b = new FunctionBody();
  b.f64Const(1).localSet(PRODUCT);
  b.localGet(PRODUCTS).localSet(OUT);
  b.block(() => {
    b.localGet(ROWS).i32Eqz().brIf(0);
    b.loop(() => {
      b.localGet(SUM).localGet(ROW).i32Const(3).i32Shl().i32Add().f64Load(0);
      if (withCandidate) b.localGet(CANDIDATE).localGet(ROW).i32Const(2).i32Shl().i32Add().f32Load(0).f64PromoteF32().f64Add();
      b.localGet(DIVISOR).f64Div().localTee(Q);
      b.f64Const(1).localGet(Q).f64Sub();
      b.localGet(POSITIVE).localGet(ROW).i32Add().i32Load8U(0).select();
      b.f64Const(1 - LOG_LOSS_EPSILON).f64Min().f64Const(LOG_LOSS_EPSILON).f64Max();
      b.localGet(PRODUCT).f64Mul().localSet(PRODUCT);
      b.localGet(RUN).i32Const(1).i32Add().localTee(RUN).i32Const(LOG_RUN).i32Eq();
      b.if(() => {
        b.localGet(OUT).localGet(PRODUCT).f64Store(0);
        b.localGet(OUT).i32Const(8).i32Add().localSet(OUT);
        b.f64Const(1).localSet(PRODUCT);
        b.i32Const(0).localSet(RUN);
      });
      b.localGet(ROW).i32Const(1).i32Add().localTee(ROW).localGet(ROWS).i32LtU().brIf(0);
    });
  });
  b.localGet(OUT).localGet(PRODUCT).f64Store(0);
  b.localGet(OUT).localGet(PRODUCTS).i32Sub().i32Const(8).i32Add();
  return b;
}

function logLossModule(): Uint8Array {
  const params = [I32, I32, I32, I32, I32, F64] as const;
  const locals = [I32, I32, I32, F64, F64] as const;
  return encodeModule([
    { exportName: "productsSum", params, results: [I32], locals, body: productsFunction(false) },
    { exportName: "productsSumCandidate", params, results: [I32], locals, body: productsFunction(true) },
  ]);
}

export function createLogLossKernel(positive: Uint8Array): LogLossKernel {
  const n = positive.length;
  const candidateOffset = 8 * n;
  const positiveOffset = 12 * n;
  const productsOffset = Math.ceil((13 * n) / 8) * 8;
  const productCount = Math.ceil(n / LOG_RUN) + 1;
  const { memory, exports } = instantiate(logLossModule, cache, productsOffset + 8 * productCount);
  const buffer = memory.buffer;
  new Uint8Array(buffer, positiveOffset, n).set(positive);
  const products = new Float64Array(buffer, productsOffset, productCount);
  const { productsSum, productsSumCandidate } = exports;
  return {
    sum: new Float64Array(buffer, 0, n),
    candidate: new Float32Array(buffer, candidateOffset, n),
    logLoss(withCandidate, divisor) {
      if (n === 0) return Number.NaN;
      const written = (withCandidate ? productsSumCandidate : productsSum)(0, candidateOffset, positiveOffset, productsOffset, n, divisor) / 8;
      let total = 0;
      for (let k = 0; k < written; k++) total += Math.log(products[k]);
      return -total / n;
    },
  };
}
