import { encodeModule, F64, FunctionBody, I32, instantiate, type WasmFunction, type WasmMemory } from "../wasm/encoder.js";
import type { CompiledTrees } from "./predict.js";
import { BITSET_WORDS } from "./split-gain.js";

/**
 * The tree walk of prediction as a WebAssembly kernel: the same walk as the JavaScript one of
 * predict.ts (same tests, same two bin encodings per row, every row taking exactly depth[t]
 * steps in tree t, trees outer and rows inner), but each step is nine plain i32 instructions:
 * loads need no bounds check of their own (the engine's guard pages cover the 32-bit address
 * space) and additions no overflow check. Sixteen rows are walked together so their dependent
 * load chains overlap. Leaf values are added to each row's score in tree order, exactly as the
 * JavaScript walk adds them, so the scores are the same bits. Numeric columns are binned here
 * too, with the eight halvings of bin-search.ts over the same padded edges, eight values at once.
 *
 * Layout of the kernel memory for a loaded model (byte addresses; node n is at 16·n):
 * - nodes at 0, four i32 each: the bin column times GROUP; the threshold (or, for a categorical
 *   node, the address of its 256-bit set with the sign bit set); the left child's address; the
 *   right child's address (a leaf: threshold 255 and both children itself);
 * - leaf values (f64) at `values`: node n's at values + 8·n, i.e. values + address / 2;
 * - the category sets at `bits` (with each node's missing direction in bit 255, as in predict.ts);
 * - the root address and the depth of each tree (i32) at `roots` and `depths`;
 * - one block of binned rows at `block`, in groups of GROUP rows, each group column-major
 *   (row r's byte of column c at (r − r mod GROUP)·stride + c·GROUP + r mod GROUP), so one base
 *   address serves a group and each row's byte is a constant offset from it;
 * - the block's scores (f64, `outputs` per row) at `raw`;
 * - the padded bin edges (f64, 256 per feature) at `edges` and one column of the block's values
 *   (f64) at `column`.
 *
 * One kernel (and memory) serves the process; it holds the last model it walked and copies the
 * next one in when another model predicts. A model whose layout would not fit in 2 GiB, or whose
 * memory the engine cannot reserve, is walked in JavaScript.
 */
export interface WalkKernel {
  /** The block of binned rows (rows × 2·features bytes) to be filled by the caller. */
  readonly block: Uint8Array;
  /** Scores of the block's rows, `outputs` per row: to be filled, walked, then read back. */
  readonly raw: Float64Array;
  /** One numeric column's values for the block's rows, to be filled by the caller before `binColumn`. */
  readonly column: Float64Array;
  /** Bins the first `count` values of `column` as feature f into the block (both encodings, as binOf). */
  binColumn(f: number, count: number): void;
  /** Adds every tree's leaf value to the scores of the block's first `count` rows. */
  walk(count: number): void;
}

/** What the kernel reads of a compiled model. */
type WalkedTrees = Pick<CompiledTrees, "treeCount" | "features" | "root" | "depth" | "node" | "value" | "set" | "bits" | "hasCategorical" | "edges">;

const LAYOUT_LIMIT = 2 ** 31;
const NODE_BYTES = 16;
/** Sign bit of a categorical node's second word (the address of its set). */
const CATEGORICAL = 1 << 31;
const cache: { compiled?: object } = {};
let current: { memory: WasmMemory; exports: Record<string, WasmFunction>; bytes: number } | undefined;
let loaded: { trees: WalkedTrees; rows: number; outputs: number; kernel: WalkKernel } | undefined;

const align8 = (bytes: number) => Math.ceil(bytes / 8) * 8;

/** Offset in the block of row r's bin column 0 (rows in groups of GROUP, column-major inside a group). */
export const blockRowOffset = (r: number, stride: number) => (r & -GROUP) * stride + (r & (GROUP - 1));

/** The kernel loaded with `trees` for blocks of `rows` rows (a multiple of GROUP), or undefined when the model is too large. */
export function walkKernel(trees: WalkedTrees, rows: number, outputs: number): WalkKernel | undefined {
  if (loaded !== undefined && loaded.trees === trees && loaded.rows === rows && loaded.outputs === outputs) return loaded.kernel;
  if (rows % GROUP !== 0) throw new RangeError(`walk kernel: blocks of ${rows} rows, not a multiple of ${GROUP}`);
  const nodes = trees.node.length / 2;
  const stride = 2 * trees.features;
  const values = NODE_BYTES * nodes;
  const bits = values + 8 * nodes;
  const roots = align8(bits + 4 * trees.bits.length);
  const depths = roots + 4 * trees.treeCount;
  const block = align8(depths + 4 * trees.treeCount);
  const raw = align8(block + rows * stride);
  const edges = raw + 8 * rows * outputs;
  const column = edges + 8 * trees.edges.length;
  const total = column + 8 * rows;
  if (total > LAYOUT_LIMIT) return undefined;
  if (current === undefined || current.bytes < total) {
    // Room to spare, so that the next few models rarely need a new memory.
    const bytes = Math.min(LAYOUT_LIMIT, 2 * total);
    try {
      current = { ...instantiate(walkModule, cache, bytes), bytes };
    } catch (error) {
      // A memory the engine cannot reserve: this model is walked in JavaScript.
      if (error instanceof RangeError) return undefined;
      throw error;
    }
  }
  const { memory, exports } = current;
  const buffer = memory.buffer;
  const nodeWords = new Int32Array(buffer, 0, 4 * nodes);
  for (let n = 0; n < nodes; n++) {
    const p = trees.node[2 * n];
    const categorical = (p & CATEGORICAL_FLAG) !== 0;
    const left = trees.node[2 * n + 1];
    nodeWords[4 * n] = GROUP * (p & 0xffff);
    nodeWords[4 * n + 1] = categorical ? (bits + 4 * BITSET_WORDS * trees.set[n]) | CATEGORICAL : (p >>> 16) & 0xff;
    nodeWords[4 * n + 2] = NODE_BYTES * left;
    nodeWords[4 * n + 3] = NODE_BYTES * (left === n ? n : left + 1);
  }
  new Float64Array(buffer, values, nodes).set(trees.value);
  new Uint32Array(buffer, bits, trees.bits.length).set(trees.bits);
  const rootAddress = new Int32Array(buffer, roots, trees.treeCount);
  for (let t = 0; t < trees.treeCount; t++) rootAddress[t] = NODE_BYTES * trees.root[t];
  new Int32Array(buffer, depths, trees.treeCount).set(trees.depth);
  new Float64Array(buffer, edges, trees.edges.length).set(trees.edges);
  const features = trees.features;
  const run = trees.hasCategorical ? exports.walkCategorical : exports.walk;
  const treeCount = trees.treeCount;
  const kernel: WalkKernel = {
    block: new Uint8Array(buffer, block, rows * stride),
    raw: new Float64Array(buffer, raw, rows * outputs),
    column: new Float64Array(buffer, column, rows),
    binColumn: (f, count) => exports.bin(edges + 2048 * f, column, count, block + GROUP * f, stride, GROUP * features),
    walk: (count) => run(treeCount, roots, depths, values, block, count, stride, raw, outputs),
  };
  loaded = { trees, rows, outputs, kernel };
  return kernel;
}

/** Rows walked together; the block holds them in groups of this many, column-major inside a group. */
export const GROUP = 16;
/** Bit 24 of a packed node word of CompiledTrees: a categorical node. */
export const CATEGORICAL_FLAG = 1 << 24;

// Parameters of both walk functions.
const TREES = 0;
const ROOTS = 1;
const DEPTHS = 2;
const VALUES = 3;
const BINS = 4;
const COUNT = 5;
const STRIDE = 6;
const RAW = 7;
const OUTPUTS = 8;
const PARAMS = 9;
// i32 locals.
const t = 9;
const root = 10;
const depth = 11;
const s = 12;
const r = 13;
const out = 14;
const rowBytes = 15;
const o = 16;
const right = 17;
const b = 18;
const row = 19;
const group = 20;
const word = 21;
const node = (k: number) => 22 + k;
const LOCALS = 22 + GROUP - PARAMS;

/** walk / walkCategorical(trees, roots, depths, values, bins, count, stride, raw, outputs), and bin. */
export function walkModule(): Uint8Array {
  const spec = (exportName: string, categorical: boolean) => ({
    exportName,
    params: new Array<number>(PARAMS).fill(I32) as (typeof I32)[],
    results: [],
    locals: new Array<number>(LOCALS).fill(I32) as (typeof I32)[],
    body: walkFunction(categorical),
  });
  return encodeModule([spec("walk", false), spec("walkCategorical", true), binFunction()]);
}

/** Values binned together by `bin` (their searches overlap). */
const BIN_LANES = 8;

/**
 * bin(edges, values, count, bins, stride, features): for each value v of row r, b = the number
 * of the feature's edges below v (eight halvings), 255 for NaN; the byte of row r at `bins` gets
 * b and the one `features` further b + 1 (255 + 1 wraps to 0). `bins` and `features` are
 * offsets in the grouped block layout (column · GROUP). Rows go BIN_LANES at a time, up to
 * `count` rounded up (the block and the values have room: GROUP is a multiple of BIN_LANES).
 */
function binFunction() {
  const EDGES = 0;
  const VALUES_AT = 1;
  const ROWS = 2;
  const OUT = 3;
  const ROW_STRIDE = 4;
  const FEATURES = 5;
  const at = 6;
  const row = 7;
  const offset = (k: number) => 8 + k;
  const v = (k: number) => 8 + BIN_LANES + k;
  const f = new FunctionBody();
  f.block(() =>
    f.loop(() => {
      f.localGet(row).localGet(ROWS).i32GeU().brIf(1);
      for (let k = 0; k < BIN_LANES; k++) {
        f.localGet(VALUES_AT).f64Load(8 * k).localSet(v(k));
        f.i32Const(0).localSet(offset(k));
      }
      // offset = 8·b, built from the top bit down: offset += (edges[b + 2^s − 1] < v) << (s + 3).
      for (let bit = 7; bit >= 0; bit--) {
        for (let k = 0; k < BIN_LANES; k++) {
          f.localGet(EDGES).localGet(offset(k)).i32Add().f64Load(8 * ((1 << bit) - 1)).localGet(v(k)).f64Lt();
          f.i32Const(bit + 3).i32Shl().localGet(offset(k)).i32Add().localSet(offset(k));
        }
      }
      // at = bins + (row & −GROUP)·stride + (row & (GROUP − 1)); the lanes' rows follow in the group.
      f.localGet(OUT).localGet(row).i32Const(-GROUP).i32And().localGet(ROW_STRIDE).i32Mul().i32Add();
      f.localGet(row).i32Const(GROUP - 1).i32And().i32Add().localSet(at);
      for (let k = 0; k < BIN_LANES; k++) {
        f.localGet(at);
        f.i32Const(255).localGet(offset(k)).i32Const(3).i32ShrU().localGet(v(k)).localGet(v(k)).f64Ne().select().localTee(offset(k));
        f.i32Store8(k);
        f.localGet(at).localGet(FEATURES).i32Add().localGet(offset(k)).i32Const(1).i32Add().i32Store8(k);
      }
      f.localGet(VALUES_AT).i32Const(8 * BIN_LANES).i32Add().localSet(VALUES_AT);
      f.localGet(row).i32Const(BIN_LANES).i32Add().localSet(row);
      f.br(0);
    }),
  );
  return {
    exportName: "bin",
    params: new Array<number>(6).fill(I32) as (typeof I32)[],
    results: [],
    locals: [...new Array<number>(2 + BIN_LANES).fill(I32), ...new Array<number>(BIN_LANES).fill(F64)] as (typeof I32 | typeof F64)[],
    body: f,
  };
}

/**
 * One step of lane k of the group at `group`: node(k) moves to its left child, or to the right
 * one (NODE_BYTES further) when the row's bin is above the threshold (or outside the set).
 */
function step(f: FunctionBody, k: number, categorical: boolean): void {
  const n = node(k);
  if (!categorical) {
    // The child's address is the third word (left) or the fourth (right): n + 8 + ((threshold − bin) >>> 31) · 4.
    f.localGet(n);
    f.localGet(n).i32Load(4);
    f.localGet(group).localGet(n).i32Load(0).i32Add().i32Load8U(k);
    f.i32Sub().i32Const(31).i32ShrU().i32Const(2).i32Shl().i32Add().i32Load(8).localSet(n);
    return;
  }
  f.localGet(group).localGet(n).i32Load(0).i32Add().i32Load8U(k).localSet(b);
  f.localGet(n).i32Load(4).localTee(word).localGet(b).i32Sub().i32Const(31).i32ShrU().localSet(right);
  f.localGet(word).i32Const(31).i32ShrU();
  f.if(() => {
    // Right when the bin is outside the set: 1 ^ (set[b >>> 5] >>> (b & 31)) & 1.
    f.localGet(word).i32Const(0x7fffffff).i32And().localGet(b).i32Const(5).i32ShrU().i32Const(2).i32Shl().i32Add().i32Load(0);
    f.localGet(b).i32ShrU().i32Const(1).i32And().i32Const(1).i32Xor().localSet(right);
  });
  f.localGet(n).localGet(right).i32Const(2).i32Shl().i32Add().i32Load(8).localSet(n);
}

/**
 * Walks rows r.. in groups of `size` (GROUP, or 1 for the rest) while a whole group remains,
 * each row `depth` steps, and adds the leaves' values.
 */
function walkGroups(f: FunctionBody, size: number, categorical: boolean): void {
  f.block(() =>
    f.loop(() => {
      f.localGet(COUNT).localGet(r).i32Const(size).i32Add().i32LtU().brIf(1);
      // group = bins + (r & −GROUP)·stride + (r & (GROUP − 1)): lane 0 of a whole group, or the row's lane.
      f.localGet(BINS).localGet(r).i32Const(-GROUP).i32And().localGet(STRIDE).i32Mul().i32Add();
      f.localGet(r).i32Const(GROUP - 1).i32And().i32Add().localSet(group);
      for (let k = 0; k < size; k++) f.localGet(root).localSet(node(k));
      f.localGet(depth).localSet(s);
      f.block(() =>
        f.loop(() => {
          f.localGet(s).i32Eqz().brIf(1);
          for (let k = 0; k < size; k++) step(f, k, categorical);
          f.localGet(s).i32Const(1).i32Sub().localSet(s);
          f.br(0);
        }),
      );
      f.localGet(out).localGet(r).localGet(rowBytes).i32Mul().i32Add().localSet(row);
      for (let k = 0; k < size; k++) {
        // Node n's value is at values + 8·n = values + address / 2.
        f.localGet(row).localGet(row).f64Load(0).localGet(VALUES).localGet(node(k)).i32Const(1).i32ShrU().i32Add().f64Load(0).f64Add().f64Store(0);
        if (k + 1 < size) f.localGet(row).localGet(rowBytes).i32Add().localSet(row);
      }
      f.localGet(r).i32Const(size).i32Add().localSet(r);
      f.br(0);
    }),
  );
}

function walkFunction(categorical: boolean): FunctionBody {
  const f = new FunctionBody();
  f.localGet(OUTPUTS).i32Const(8).i32Mul().localSet(rowBytes);
  f.i32Const(0).localSet(t);
  f.i32Const(0).localSet(o);
  f.block(() =>
    f.loop(() => {
      f.localGet(t).localGet(TREES).i32GeU().brIf(1);
      f.localGet(ROOTS).localGet(t).i32Const(2).i32Shl().i32Add().i32Load(0).localSet(root);
      f.localGet(DEPTHS).localGet(t).i32Const(2).i32Shl().i32Add().i32Load(0).localSet(depth);
      // Tree t adds to output t mod outputs.
      f.localGet(RAW).localGet(o).i32Const(3).i32Shl().i32Add().localSet(out);
      f.i32Const(0).localSet(r);
      walkGroups(f, GROUP, categorical);
      walkGroups(f, 1, categorical);
      f.localGet(t).i32Const(1).i32Add().localSet(t);
      f.localGet(o).i32Const(1).i32Add().localTee(o).localGet(OUTPUTS).i32Eq();
      f.if(() => f.i32Const(0).localSet(o));
      f.br(0);
    }),
  );
  return f;
}
