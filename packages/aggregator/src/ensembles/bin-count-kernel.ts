import { encodeModule, F64, FunctionBody, I32, instantiate } from "@nightshift/learners";

/**
 * The hot loops of greedy selection's AP and ROC AUC scorer, in WebAssembly. Every row's score
 * (the running sum, plus the candidate's prediction) is mapped to an equal-width bin,
 * bin = trunc((s − lo)·scale), and
 * - `count` counts rows per bin and class into interleaved [negatives, positives] counters;
 * - `gather` copies every row's score to its [bin, class] cursor and advances the cursor by the
 *   bin's step (1 for the bins to sort, 0 for the others, whose cursors point at a spare slot),
 *   without a branch per row;
 * - `averagePrecisionUpper` is the sum over bins of a·(TP + a)/(TP + FP + a), the optimistic
 *   side of average precision's bounds (see hillclimb-scorer.ts).
 * The arithmetic is the same IEEE 754 double arithmetic as JavaScript's (an f32 prediction
 * widened exactly, one add, one subtract, one multiply, truncation of a non-negative value =
 * floor; counts converted exactly), so the bins are those `Math.floor((sum[i] + add[i] - lo) *
 * scale)` gives and the sum is the one a JavaScript loop gives; the engine runs these loops
 * about four times faster than the equivalent JavaScript (typed-array bounds checks and the
 * counters' load-increment-store are what the JIT cannot shorten).
 *
 * Memory: sum f64 × n | candidate f32 × n | positive u8 × n | counts i32 × 2(bins + 1) |
 * steps i32 × (bins + 1) | cursors i32 × 2(bins + 1) | segments f64 × (n + 1).
 */
export interface BinCounter {
  /** The running sum, in the kernel's memory: write it here. */
  readonly sum: Float64Array;
  /** The candidate's predictions, in the kernel's memory. */
  readonly candidate: Float32Array;
  /** Counters per bin, [negatives, positives], filled by `count`. */
  readonly counts: Int32Array;
  /** Per bin: 1 to gather its rows, 0 to leave them (their cursors must point at the spare slot `n`). */
  readonly steps: Int32Array;
  /** Per bin, [negatives, positives]: where `gather` writes the next score of that class (advanced as it goes). */
  readonly cursors: Int32Array;
  /** Gathered scores, and one spare slot at index n. */
  readonly segments: Float64Array;
  /** Clears the counters and counts every row; `withCandidate` false counts the sum alone. */
  count(withCandidate: boolean, lo: number, scale: number): void;
  /** Copies the score of every row to its [bin, class] cursor and advances the cursor by the bin's step. */
  gather(withCandidate: boolean, lo: number, scale: number): void;
  /** Σ over bins with positives of a·(TP + a)/(TP + FP + a), TP and FP counted above the bin, from `counts`. */
  averagePrecisionUpper(): number;
}

const cache: { compiled?: object } = {};

// Parameters: sum, candidate, positive, counts or cursors, steps, segments (byte offsets), n, lo, scale.
const SUM = 0;
const CANDIDATE = 1;
const POSITIVE = 2;
const SLOTS = 3;
const STEPS = 4;
const SEGMENTS = 5;
const ROWS = 6;
const LO = 7;
const SCALE = 8;
// Locals.
const ROW = 9;
const ADDRESS = 10;
const BIN = 11;
const SCORE = 12;
const CURSOR = 13;

/** Leaves the row's score (an f64) on the stack. */
function rowScore(b: FunctionBody, withCandidate: boolean): void {
  b.localGet(SUM).localGet(ROW).i32Const(3).i32Shl().i32Add().f64Load(0);
  if (withCandidate) b.localGet(CANDIDATE).localGet(ROW).i32Const(2).i32Shl().i32Add().f32Load(0).f64PromoteF32().f64Add();
}

/** Leaves the byte address of the row's [bin, class] slot in the i32 array at SLOTS on the stack; sets BIN. */
function slotAddress(b: FunctionBody): void {
  b.localGet(LO).f64Sub().localGet(SCALE).f64Mul().i32TruncF64S().localTee(BIN);
  b.i32Const(1).i32Shl();
  b.localGet(POSITIVE).localGet(ROW).i32Add().i32Load8U(0).i32Or();
  b.i32Const(2).i32Shl().localGet(SLOTS).i32Add();
}

function rowLoop(b: FunctionBody, body: () => void): void {
  b.block(() => {
    b.localGet(ROWS).i32Eqz().brIf(0);
    b.loop(() => {
      body();
      b.localGet(ROW).i32Const(1).i32Add().localTee(ROW).localGet(ROWS).i32LtU().brIf(0);
    });
  });
}

function countingFunction(withCandidate: boolean): FunctionBody {
  const b = new FunctionBody();
  rowLoop(b, () => {
    rowScore(b, withCandidate);
    slotAddress(b);
    b.localTee(ADDRESS).localGet(ADDRESS).i32Load(0).i32Const(1).i32Add().i32Store(0);
  });
  return b;
}

function gatheringFunction(withCandidate: boolean): FunctionBody {
  const b = new FunctionBody();
  rowLoop(b, () => {
    rowScore(b, withCandidate);
    b.localTee(SCORE);
    slotAddress(b);
    b.localTee(ADDRESS).i32Load(0).localSet(CURSOR);
    b.localGet(SEGMENTS).localGet(CURSOR).i32Const(3).i32Shl().i32Add().localGet(SCORE).f64Store(0);
    b.localGet(ADDRESS).localGet(CURSOR);
    b.localGet(STEPS).localGet(BIN).i32Const(2).i32Shl().i32Add().i32Load(0);
    b.i32Add().i32Store(0);
  });
  return b;
}

/** (counts, bins) → Σ a·(TP + a)/(TP + FP + a) over bins from the top one (index `bins`) down. */
function averagePrecisionUpperFunction(): FunctionBody {
  const COUNTS = 0;
  const TOP = 1;
  const BIN_INDEX = 2;
  const POSITIVES_HERE = 3;
  const TP = 4;
  const FP = 5;
  const UPPER = 6;
  const A = 7;
  const b = new FunctionBody();
  b.localGet(TOP).localSet(BIN_INDEX);
  b.loop(() => {
    b.localGet(COUNTS).localGet(BIN_INDEX).i32Const(3).i32Shl().i32Add().i32Load(4).localTee(POSITIVES_HERE).f64ConvertI32S().localSet(A);
    b.localGet(POSITIVES_HERE);
    b.if(() => {
      b.localGet(UPPER).localGet(A).localGet(TP).localGet(A).f64Add().f64Mul();
      b.localGet(TP).localGet(FP).f64Add().localGet(A).f64Add().f64Div().f64Add().localSet(UPPER);
    });
    b.localGet(TP).localGet(A).f64Add().localSet(TP);
    b.localGet(FP).localGet(COUNTS).localGet(BIN_INDEX).i32Const(3).i32Shl().i32Add().i32Load(0).f64ConvertI32S().f64Add().localSet(FP);
    b.localGet(BIN_INDEX).i32Const(1).i32Sub().localTee(BIN_INDEX).i32Const(0).i32GeS().brIf(0);
  });
  b.localGet(UPPER);
  return b;
}

function binCountModule(): Uint8Array {
  const params = [I32, I32, I32, I32, I32, I32, I32, F64, F64] as const;
  const locals = [I32, I32, I32, F64, I32] as const;
  return encodeModule([
    { exportName: "countSum", params, results: [], locals, body: countingFunction(false) },
    { exportName: "countSumCandidate", params, results: [], locals, body: countingFunction(true) },
    { exportName: "gatherSum", params, results: [], locals, body: gatheringFunction(false) },
    { exportName: "gatherSumCandidate", params, results: [], locals, body: gatheringFunction(true) },
    { exportName: "averagePrecisionUpper", params: [I32, I32], results: [F64], locals: [I32, I32, F64, F64, F64, F64], body: averagePrecisionUpperFunction() },
  ]);
}

const align8 = (bytes: number): number => Math.ceil(bytes / 8) * 8;

/** A counter for `positive.length` rows and `bins` bins (plus one spare for a value at the top edge). */
export function createBinCounter(positive: Uint8Array, bins: number): BinCounter {
  const n = positive.length;
  const slots = 2 * (bins + 1);
  const candidateOffset = 8 * n;
  const positiveOffset = 12 * n;
  const countsOffset = align8(13 * n);
  const stepsOffset = countsOffset + 4 * slots;
  const cursorsOffset = stepsOffset + 4 * (bins + 1);
  const segmentsOffset = align8(cursorsOffset + 4 * slots);
  const { memory, exports } = instantiate(binCountModule, cache, segmentsOffset + 8 * (n + 1));
  const buffer = memory.buffer;
  new Uint8Array(buffer, positiveOffset, n).set(positive);
  const counts = new Int32Array(buffer, countsOffset, slots);
  const { countSum, countSumCandidate, gatherSum, gatherSumCandidate, averagePrecisionUpper } = exports;
  return {
    sum: new Float64Array(buffer, 0, n),
    candidate: new Float32Array(buffer, candidateOffset, n),
    counts,
    steps: new Int32Array(buffer, stepsOffset, bins + 1),
    cursors: new Int32Array(buffer, cursorsOffset, slots),
    segments: new Float64Array(buffer, segmentsOffset, n + 1),
    count(withCandidate, lo, scale) {
      counts.fill(0);
      (withCandidate ? countSumCandidate : countSum)(0, candidateOffset, positiveOffset, countsOffset, stepsOffset, segmentsOffset, n, lo, scale);
    },
    gather(withCandidate, lo, scale) {
      (withCandidate ? gatherSumCandidate : gatherSum)(0, candidateOffset, positiveOffset, cursorsOffset, stepsOffset, segmentsOffset, n, lo, scale);
    },
    averagePrecisionUpper: () => averagePrecisionUpper(countsOffset, bins),
  };
}
