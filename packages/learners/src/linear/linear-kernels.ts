import { encodeModule, FunctionBody, I32, instantiate, V128, WASM_MEMORY_LIMIT } from "../wasm/encoder.js";
import { multiplyRows, multiplyTransposed } from "./matrix-products.js";

/**
 * The two products every evaluation of a linear model makes with its design matrix X (n × p),
 * in two-lane double-precision WebAssembly SIMD over a copy of X held in the kernel's memory:
 *
 *   scores = X·Wᵀ + b           (k scores per row: one for binary logistic, K for softmax)
 *   gradient part = Rᵀ·X         (R: n × k residuals)
 *
 * Four rows are processed together so each weight (or output) load serves four rows. Rows are
 * padded to a multiple of four and columns to an even stride with zeros, which add nothing.
 * WebAssembly arithmetic is exactly IEEE 754 without contraction, so the results are the same
 * on every machine. A design matrix beyond the 4 GiB a WebAssembly memory can address falls back
 * to the plain JavaScript products of matrix-products.ts.
 */
export interface LinearKernels {
  readonly rows: number;
  readonly width: number;
  /** Doubles per row of `x` (width rounded up to even). */
  readonly stride: number;
  /** The design matrix, rows × stride, to be filled by the caller (padding stays zero). */
  readonly x: Float64Array;
  /** A zeroed buffer of `length` doubles in the kernel memory (only these may be passed as outputs/residuals). */
  buffer(length: number): Float64Array;
  /** out[i·k + c] = x_i · weights[c·width ..] + intercepts[c]; `out` from `buffer(rows·k)`. */
  multiplyRows(weights: Float64Array, intercepts: Float64Array, k: number, out: Float64Array): void;
  /** out[c·width + j] = Σ_i residuals[i·k + c] · x_ij; `residuals` from `buffer(rows·k)`. */
  multiplyTransposed(residuals: Float64Array, k: number, out: Float64Array): void;
}

const ROW_BLOCK = 4;
const cache: { compiled?: object } = {};

/** Kernels for a design matrix of `rows` × `width`, with room for `buffers` score buffers of `rows`·k doubles. */
export function createLinearKernels(rows: number, width: number, k: number, buffers: number): LinearKernels {
  const stride = Math.max(2, width + (width % 2));
  const paddedRows = Math.ceil(rows / ROW_BLOCK) * ROW_BLOCK;
  const xBytes = paddedRows * stride * 8;
  const scratchBytes = (k * stride + k) * 8;
  const bufferBytes = paddedRows * k * 8;
  const totalBytes = xBytes + 2 * scratchBytes + buffers * bufferBytes;
  if (totalBytes > WASM_MEMORY_LIMIT) return javascriptKernels(rows, width);
  const { memory, exports } = instantiate(linearModule, cache, totalBytes);
  const x = new Float64Array(memory.buffer, 0, paddedRows * stride);
  const weightsAt = xBytes;
  const gradientAt = xBytes + scratchBytes;
  const scratch = new Float64Array(memory.buffer, weightsAt, k * stride + k);
  const gradient = new Float64Array(memory.buffer, gradientAt, k * stride);
  let nextBuffer = xBytes + 2 * scratchBytes;
  return {
    rows,
    width,
    stride,
    x,
    buffer(length) {
      if (length > paddedRows * k) throw new RangeError("linear kernels: buffer larger than rows × k");
      if (nextBuffer + bufferBytes > totalBytes) throw new RangeError(`linear kernels: all ${buffers} buffers are in use`);
      const out = new Float64Array(memory.buffer, nextBuffer, length);
      nextBuffer += bufferBytes;
      return out;
    },
    multiplyRows(weights, intercepts, scoreCount, out) {
      for (let c = 0; c < scoreCount; c++) {
        scratch.set(weights.subarray(c * width, (c + 1) * width), c * stride);
        scratch[k * stride + c] = intercepts[c];
      }
      exports.scores(0, paddedRows, stride, weightsAt, weightsAt + k * stride * 8, scoreCount, out.byteOffset);
    },
    multiplyTransposed(residuals, scoreCount, out) {
      gradient.fill(0);
      exports.transposed(0, paddedRows, stride, residuals.byteOffset, scoreCount, gradientAt);
      for (let c = 0; c < scoreCount; c++) out.set(gradient.subarray(c * stride, c * stride + width), c * width);
    },
  };
}

function javascriptKernels(rows: number, width: number): LinearKernels {
  const x = new Float64Array(rows * width);
  return {
    rows,
    width,
    stride: width,
    x,
    buffer: (length) => new Float64Array(length),
    multiplyRows: (weights, intercepts, k, out) => multiplyRows(x, rows, width, weights, intercepts, k, out),
    multiplyTransposed: (residuals, k, out) => multiplyTransposed(x, rows, width, residuals, k, out),
  };
}

export function linearModule(): Uint8Array {
  return encodeModule([scoresFunction(), transposedFunction()]);
}

// Shared parameter and local numbering of both functions.
const X = 0;
const ROWS = 1;
const STRIDE = 2;
const rowBytes = 7;
const i = 8;
const c = 9;
const j = 10;
const pointer = (r: number) => 11 + r;
const wp = 15;
const out = 16;
const kBytes = 17;
const acc = (r: number) => 18 + r;
const vector = 22;
/** Locals up to index 17 are i32 (after the parameters), 18..22 are v128. */
const FIRST_V128 = 18;
const V128_LOCALS = 5;
const locals = (params: number) => [...new Array(FIRST_V128 - params).fill(I32), ...new Array(V128_LOCALS).fill(V128)];

/** Sets pointer(r) = X + (i + r)·rowBytes for the four rows of the block. */
function rowPointers(f: FunctionBody): void {
  f.localGet(X).localGet(i).localGet(rowBytes).i32Mul().i32Add().localSet(pointer(0));
  for (let r = 1; r < ROW_BLOCK; r++) f.localGet(pointer(r - 1)).localGet(rowBytes).i32Add().localSet(pointer(r));
}

function advancePointers(f: FunctionBody, extra: number): void {
  for (let r = 0; r < ROW_BLOCK; r++) f.localGet(pointer(r)).i32Const(16).i32Add().localSet(pointer(r));
  f.localGet(extra).i32Const(16).i32Add().localSet(extra);
}

/** Loops `i` over row blocks and `c` over scores, running `body` for each (block, score). */
function rowsAndScores(f: FunctionBody, k: number, body: () => void): void {
  f.localGet(STRIDE).i32Const(8).i32Mul().localSet(rowBytes);
  f.localGet(k).i32Const(8).i32Mul().localSet(kBytes);
  f.i32Const(0).localSet(i);
  f.block(() =>
    f.loop(() => {
      f.localGet(i).localGet(ROWS).i32GeU().brIf(1);
      f.i32Const(0).localSet(c);
      f.block(() =>
        f.loop(() => {
          f.localGet(c).localGet(k).i32GeU().brIf(1);
          body();
          f.localGet(c).i32Const(1).i32Add().localSet(c);
          f.br(0);
        }),
      );
      f.localGet(i).i32Const(ROW_BLOCK).i32Add().localSet(i);
      f.br(0);
    }),
  );
}

/** scores(x, rows, stride, weights, intercepts, k, out): out[i·k + c] = Σ_j x[i][j]·w[c][j] + b[c]. */
function scoresFunction() {
  const W = 3;
  const B = 4;
  const K = 5;
  const OUT = 6;
  const f = new FunctionBody();
  rowsAndScores(f, K, () => {
    for (let r = 0; r < ROW_BLOCK; r++) f.v128Zero().localSet(acc(r));
    rowPointers(f);
    f.localGet(W).localGet(c).localGet(rowBytes).i32Mul().i32Add().localSet(wp);
    f.localGet(STRIDE).localSet(j);
    f.loop(() => {
      f.localGet(wp).v128Load(0).localSet(vector);
      for (let r = 0; r < ROW_BLOCK; r++) f.localGet(acc(r)).localGet(pointer(r)).v128Load(0).localGet(vector).f64x2Mul().f64x2Add().localSet(acc(r));
      advancePointers(f, wp);
      f.localGet(j).i32Const(2).i32Sub().localTee(j).brIf(0);
    });
    // out + (i·k + c)·8, then one row (k doubles) further for each of the four rows.
    f.localGet(OUT).localGet(i).localGet(K).i32Mul().localGet(c).i32Add().i32Const(8).i32Mul().i32Add().localSet(out);
    for (let r = 0; r < ROW_BLOCK; r++) {
      f.localGet(out);
      f.localGet(acc(r)).f64x2ExtractLane(0).localGet(acc(r)).f64x2ExtractLane(1).f64Add();
      f.localGet(B).localGet(c).i32Const(8).i32Mul().i32Add().f64Load(0).f64Add();
      f.f64Store(0);
      f.localGet(out).localGet(kBytes).i32Add().localSet(out);
    }
  });
  return { exportName: "scores", params: new Array(7).fill(I32), results: [], locals: locals(7), body: f };
}

/** transposed(x, rows, stride, residuals, k, out): out[c][j] += Σ_i residuals[i·k + c]·x[i][j] (out zeroed by the caller). */
function transposedFunction() {
  const R = 3;
  const K = 4;
  const OUT = 5;
  const f = new FunctionBody();
  rowsAndScores(f, K, () => {
    // acc(r) = splat(residuals[(i + r)·k + c]).
    f.localGet(R).localGet(i).localGet(K).i32Mul().localGet(c).i32Add().i32Const(8).i32Mul().i32Add().localSet(out);
    for (let r = 0; r < ROW_BLOCK; r++) {
      f.localGet(out).v128Load64Splat(0).localSet(acc(r));
      f.localGet(out).localGet(kBytes).i32Add().localSet(out);
    }
    rowPointers(f);
    f.localGet(OUT).localGet(c).localGet(rowBytes).i32Mul().i32Add().localSet(wp);
    f.localGet(STRIDE).localSet(j);
    f.loop(() => {
      f.localGet(wp);
      f.localGet(wp).v128Load(0);
      f.localGet(acc(0)).localGet(pointer(0)).v128Load(0).f64x2Mul().localGet(acc(1)).localGet(pointer(1)).v128Load(0).f64x2Mul().f64x2Add();
      f.localGet(acc(2)).localGet(pointer(2)).v128Load(0).f64x2Mul().localGet(acc(3)).localGet(pointer(3)).v128Load(0).f64x2Mul().f64x2Add();
      f.f64x2Add().f64x2Add();
      f.v128Store(0);
      advancePointers(f, wp);
      f.localGet(j).i32Const(2).i32Sub().localTee(j).brIf(0);
    });
  });
  return { exportName: "transposed", params: new Array(6).fill(I32), results: [], locals: locals(6), body: f };
}
