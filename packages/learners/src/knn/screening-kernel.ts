import { encodeModule, FunctionBody, I32, instantiate, V128, type WasmMemory } from "../wasm/encoder.js";

/**
 * The hot loop of brute-force nearest-neighbour search: squared distances of every query to
 * every training row through ‖a‖² + ‖b‖² − 2·a·b, the dot products computed as a small
 * matrix product in 4-lane single-precision WebAssembly SIMD (register blocking as in Goto &
 * van de Geijn 2008, "Anatomy of high-performance matrix multiplication": a 4-query × 8-row
 * block of accumulators stays in registers while the feature loop streams packed panels).
 *
 * The kernel does not decide neighbours. It compares each approximate distance with a per-query
 * threshold and records which (query, training row) pairs could be among the k nearest; the
 * caller computes their exact double-precision distances. The threshold carries a rounding
 * margin (see `screeningMargin`), so no true neighbour is ever screened out.
 *
 * Layouts in the WebAssembly memory (all f32):
 * - query blocks: block b holds queries 4b..4b+3, feature-major: [feature][4];
 * - training panels: panel P holds rows 8P..8P+7, feature-major: [feature][8];
 * - one norm per query (‖a‖²) and one shifted norm per training row (‖b‖² lowered by its margin);
 * - one threshold per query;
 * - records out: three i32 per flagged (query, panel) pair: query, panel, 8-bit lane mask.
 */
export const QUERY_BLOCK = 4;
export const PANEL_ROWS = 8;
export const RECORD_BYTES = 12;

export interface ScreeningCall {
  /** Byte offsets in the kernel's memory. */
  readonly queryBlocks: number;
  readonly queryBlockCount: number;
  readonly queryNorms: number;
  readonly thresholds: number;
  readonly panels: number;
  readonly panelCount: number;
  readonly panelNorms: number;
  readonly features: number;
  /** Panel number written into records for the first panel of this call. */
  readonly firstPanel: number;
  readonly records: number;
}

export interface ScreeningKernel {
  readonly memory: WasmMemory;
  /** Runs the kernel; returns the number of records written. */
  screen(call: ScreeningCall): number;
}

const cache: { compiled?: object } = {};

/** A kernel instance over a fresh memory of at least `bytes` bytes. */
export function createScreeningKernel(bytes: number): ScreeningKernel {
  const { memory, exports } = instantiate(screeningModule, cache, bytes);
  const run = exports.screen;
  return {
    memory,
    screen: (c) =>
      ((run(c.queryBlocks, c.queryBlockCount, c.queryNorms, c.thresholds, c.panels, c.panelCount, c.panelNorms, c.features, c.firstPanel, c.records) >>> 0) - c.records) /
      RECORD_BYTES,
  };
}

/** The kernel as a WebAssembly module (a pure function of nothing: built once, compiled once). */
export function screeningModule(): Uint8Array {
  // Parameters.
  const queryBlocks = 0;
  const queryBlockCount = 1;
  const queryNorms = 2;
  const thresholds = 3;
  const panels = 4;
  const panelCount = 5;
  const panelNorms = 6;
  const features = 7;
  const firstPanel = 8;
  const records = 9;
  // i32 locals.
  const block = 10;
  const panel = 11;
  const remaining = 12;
  const queryCursor = 13;
  const panelCursor = 14;
  const recordCursor = 15;
  const normBase = 16;
  const query = 17;
  // v128 locals.
  const acc = (r: number, half: number) => 18 + 2 * r + half;
  const row0 = 18 + 2 * QUERY_BLOCK;
  const row1 = row0 + 1;
  const splat = row0 + 2;
  const threshold = row0 + 3;
  const norms0 = row0 + 4;
  const norms1 = row0 + 5;
  const mask0 = row0 + 6;
  const mask1 = row0 + 7;

  const f = new FunctionBody();
  f.localGet(records).localSet(recordCursor);
  f.i32Const(0).localSet(block);
  f.block(() =>
    f.loop(() => {
      f.localGet(block).localGet(queryBlockCount).i32GeU().brIf(1);
      f.i32Const(0).localSet(panel);
      f.block(() =>
        f.loop(() => {
          f.localGet(panel).localGet(panelCount).i32GeU().brIf(1);
          for (let r = 0; r < QUERY_BLOCK; r++) for (let h = 0; h < 2; h++) f.v128Zero().localSet(acc(r, h));
          // queryCursor = queryBlocks + block·features·16; panelCursor = panels + panel·features·32.
          f.localGet(queryBlocks).localGet(block).localGet(features).i32Mul().i32Const(4 * QUERY_BLOCK).i32Mul().i32Add().localSet(queryCursor);
          f.localGet(panels).localGet(panel).localGet(features).i32Mul().i32Const(4 * PANEL_ROWS).i32Mul().i32Add().localSet(panelCursor);
          f.localGet(features).localSet(remaining);
          f.loop(() => {
            f.localGet(panelCursor).v128Load(0).localSet(row0);
            f.localGet(panelCursor).v128Load(16).localSet(row1);
            for (let r = 0; r < QUERY_BLOCK; r++) {
              f.localGet(queryCursor).v128Load32Splat(4 * r).localSet(splat);
              f.localGet(acc(r, 0)).localGet(splat).localGet(row0).f32x4Mul().f32x4Add().localSet(acc(r, 0));
              f.localGet(acc(r, 1)).localGet(splat).localGet(row1).f32x4Mul().f32x4Add().localSet(acc(r, 1));
            }
            f.localGet(queryCursor).i32Const(4 * QUERY_BLOCK).i32Add().localSet(queryCursor);
            f.localGet(panelCursor).i32Const(4 * PANEL_ROWS).i32Add().localSet(panelCursor);
            f.localGet(remaining).i32Const(1).i32Sub().localTee(remaining).brIf(0);
          });
          // Epilogue: approximate squared distances (‖a‖² + ‖b‖²) − 2·a·b against each query's threshold.
          f.localGet(panelNorms).localGet(panel).i32Const(4 * PANEL_ROWS).i32Mul().i32Add().localSet(normBase);
          f.localGet(normBase).v128Load(0).localSet(norms0);
          f.localGet(normBase).v128Load(16).localSet(norms1);
          f.localGet(block).i32Const(4 * QUERY_BLOCK).i32Mul().localSet(normBase);
          for (let r = 0; r < QUERY_BLOCK; r++) {
            f.localGet(queryNorms).localGet(normBase).i32Add().v128Load32Splat(4 * r).localSet(splat);
            f.localGet(thresholds).localGet(normBase).i32Add().v128Load32Splat(4 * r).localSet(threshold);
            f.localGet(splat).localGet(norms0).f32x4Add().localGet(acc(r, 0)).localGet(acc(r, 0)).f32x4Add().f32x4Sub();
            f.localGet(threshold).f32x4Le().localSet(mask0);
            f.localGet(splat).localGet(norms1).f32x4Add().localGet(acc(r, 1)).localGet(acc(r, 1)).f32x4Add().f32x4Sub();
            f.localGet(threshold).f32x4Le().localSet(mask1);
            f.localGet(mask0).localGet(mask1).v128Or().v128AnyTrue();
            f.if(() => {
              f.localGet(block).i32Const(QUERY_BLOCK).i32Mul().i32Const(r).i32Add().localSet(query);
              f.localGet(recordCursor).localGet(query).i32Store(0);
              f.localGet(recordCursor).localGet(firstPanel).localGet(panel).i32Add().i32Store(4);
              f.localGet(recordCursor).localGet(mask0).i32x4Bitmask().localGet(mask1).i32x4Bitmask().i32Const(4).i32Shl().i32Or().i32Store(8);
              f.localGet(recordCursor).i32Const(RECORD_BYTES).i32Add().localSet(recordCursor);
            });
          }
          f.localGet(panel).i32Const(1).i32Add().localSet(panel);
          f.br(0);
        }),
      );
      f.localGet(block).i32Const(1).i32Add().localSet(block);
      f.br(0);
    }),
  );
  f.localGet(recordCursor);

  return encodeModule([
    {
      exportName: "screen",
      params: new Array(10).fill(I32),
      results: [I32],
      locals: [...new Array(8).fill(I32), ...new Array(2 * QUERY_BLOCK + 8).fill(V128)],
      body: f,
    },
  ]);
}
