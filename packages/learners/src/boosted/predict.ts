import type { TableView } from "@nightshift/core";
import { type BinMapper, MISSING_BIN } from "../binning/bin-mapper.js";
import { binOf, paddedEdges } from "./bin-search.js";
import { BITSET_WORDS } from "./split-gain.js";
import type { TreeEnsemble } from "./tree-ensemble.js";
import { blockRowOffset, CATEGORICAL_FLAG, GROUP, type WalkKernel, walkKernel } from "./walk-kernel.js";

/** Most features a model can have: a node addresses one of 2·features bin columns in 16 bits. */
export const MAX_FEATURES = 32_767;

/**
 * The trees laid out for prediction over rows binned with the training mapper.
 *
 * Each row is binned twice: columns 0..F-1 hold the bin with missing = 255 (above every value
 * bin), columns F..2F-1 hold bin + 1 with missing = 0 (below every value bin). A numeric node
 * whose missing values go right compares column f against its threshold t; one whose missing
 * values go left compares column F + f against t + 1. Either way "go right" is the integer
 * test bin > threshold, computed without a branch, and missing values need no extra test.
 *
 * `node[2n]` packs the column (bits 0-15), the threshold (bits 16-23) and a categorical flag
 * (bit 24); `node[2n + 1]` is the left child (global index; right = left + 1). A leaf points to
 * itself with threshold 255, so every row can take exactly `depth[t]` steps in tree t.
 * A categorical node sends right the bins outside its set; bit 255 of the set holds its
 * missing direction.
 */
export interface CompiledTrees {
  readonly treeCount: number;
  readonly features: number;
  readonly root: Int32Array;
  readonly depth: Int32Array;
  readonly node: Int32Array;
  readonly value: Float64Array;
  readonly set: Int32Array;
  readonly bits: Uint32Array;
  readonly hasCategorical: boolean;
  /** Per numeric feature, its 255 upper edges padded with +∞ to 256 (branch-free binning). */
  readonly edges: Float64Array;
  /** Per bin column (2·features), 1 when some node reads it; other columns are not filled. */
  readonly columnUsed: Uint8Array;
}

export function compileTrees(trees: TreeEnsemble, mapper: BinMapper): CompiledTrees {
  const features = mapper.features.length;
  if (features > MAX_FEATURES) throw new RangeError(`boosted models support at most ${MAX_FEATURES} features (got ${features})`);
  const nodes = trees.feature.length;
  const node = new Int32Array(2 * nodes);
  const root = new Int32Array(trees.treeCount);
  const depth = new Int32Array(trees.treeCount);
  const nodeDepth = new Int32Array(nodes);
  const bits = trees.bits.slice();
  const columnUsed = new Uint8Array(2 * features);
  let hasCategorical = false;
  for (let t = 0; t < trees.treeCount; t++) {
    const start = trees.treeStart[t];
    root[t] = start;
    // Children always follow their parent, so one forward pass gives every node's depth.
    nodeDepth[start] = 0;
    for (let n = start; n < trees.treeStart[t + 1]; n++) {
      const f = trees.feature[n];
      if (f < 0) {
        node[2 * n] = 255 << 16;
        node[2 * n + 1] = n;
        depth[t] = Math.max(depth[t], nodeDepth[n]);
        continue;
      }
      const left = start + trees.left[n];
      node[2 * n + 1] = left;
      nodeDepth[left] = nodeDepth[left + 1] = nodeDepth[n] + 1;
      const missingLeft = trees.missingLeft[n] === 1;
      if (trees.set[n] >= 0) {
        hasCategorical = true;
        node[2 * n] = f | CATEGORICAL_FLAG;
        const word = trees.set[n] * BITSET_WORDS + (MISSING_BIN >>> 5);
        const bit = 1 << (MISSING_BIN & 31);
        bits[word] = missingLeft ? bits[word] | bit : bits[word] & ~bit;
      } else {
        const threshold = trees.threshold[n];
        node[2 * n] = missingLeft ? (features + f) | ((threshold + 1) << 16) : f | (threshold << 16);
      }
      columnUsed[node[2 * n] & 0xffff] = 1;
    }
  }
  const edges = paddedEdges(mapper);
  return { treeCount: trees.treeCount, features, root, depth, node, value: trees.value, set: trees.set, bits, hasCategorical, edges, columnUsed };
}

/** Rows per block: the block's bins (2 bytes per feature) stay in cache while every tree visits them. */
const BLOCK_ROWS = 512;

/**
 * Adds every tree's leaf value to `raw` (row-major, `outputs` per row, pre-filled with the
 * initial scores). Rows are binned with the training mapper a block at a time, then trees
 * outer, rows inner, eight rows walked together so their independent steps overlap. The walk
 * runs in the WebAssembly kernel of walk-kernel.ts (same steps, same order of additions, same
 * scores); `engine: "javascript"` (or a model too large for the kernel) walks in JavaScript.
 */
export function addTreeScores(
  compiled: CompiledTrees,
  mapper: BinMapper,
  view: TableView,
  outputs: number,
  raw: Float64Array,
  engine: "webassembly" | "javascript" = "webassembly",
): void {
  const n = view.rows.length;
  const features = compiled.features;
  mapper.features.forEach((bins, f) => {
    const column = view.columns[f];
    if ((column.kind === "categorical") !== (bins.kind === "categorical")) {
      throw new TypeError(`feature ${column.name}: fitted as ${bins.kind}, given ${column.kind === "categorical" ? "categorical" : "numeric"}`);
    }
  });
  const kernel = engine === "webassembly" && n > 0 ? walkKernel(compiled, BLOCK_ROWS, outputs) : undefined;
  if (kernel !== undefined) {
    for (let first = 0; first < n; first += BLOCK_ROWS) {
      const count = Math.min(BLOCK_ROWS, n - first);
      binBlock(compiled, mapper, view, first, count, kernel.block, kernel);
      const scores = raw.subarray(first * outputs, (first + count) * outputs);
      kernel.raw.set(scores);
      kernel.walk(count);
      scores.set(kernel.raw.subarray(0, count * outputs));
    }
    return;
  }
  const block = new Uint8Array(BLOCK_ROWS * 2 * features);
  for (let first = 0; first < n; first += BLOCK_ROWS) {
    const count = Math.min(BLOCK_ROWS, n - first);
    binBlock(compiled, mapper, view, first, count, block);
    if (compiled.hasCategorical) scoreBlockWithCategories(compiled, block, count, first, outputs, raw);
    else scoreBlock(compiled, block, count, first, outputs, raw);
  }
}

/** Bins rows first..first+count-1 of the view into the block (both encodings, see CompiledTrees). */
function binBlock(compiled: CompiledTrees, mapper: BinMapper, view: TableView, first: number, count: number, block: Uint8Array, kernel?: WalkKernel): void {
  const features = compiled.features;
  const stride = 2 * features;
  const rows = view.rows;
  const edges = compiled.edges;
  // Consecutive rows (the usual case) are copied into the kernel with one typed-array copy per column.
  let consecutive = kernel !== undefined;
  for (let r = 1; consecutive && r < count; r++) consecutive = rows[first + r] === rows[first] + r;
  for (let f = 0; f < features; f++) {
    const column = view.columns[f];
    const bins = mapper.features[f];
    // Columns no node reads stay unfilled (a leaf's test is false for any byte).
    if (compiled.columnUsed[f] === 0 && compiled.columnUsed[features + f] === 0) continue;
    if (column.kind === "categorical" && bins.kind === "categorical") {
      const binOfCode = bins.binOfCode;
      const codes = column.codes;
      // The kernel's block holds rows in groups (see blockRowOffset), columns GROUP bytes apart.
      const scale = kernel === undefined ? 1 : GROUP;
      for (let r = 0; r < count; r++) {
        const code = codes[rows[first + r]];
        const b = code >= 0 && code < binOfCode.length ? binOfCode[code] : MISSING_BIN;
        const at = kernel === undefined ? r * stride : blockRowOffset(r, stride);
        block[at + scale * f] = b;
        block[at + scale * (features + f)] = b + 1;
      }
    } else if (column.kind !== "categorical" && kernel !== undefined) {
      const values = column.values;
      const into = kernel.column;
      if (consecutive) into.set(values.subarray(rows[first], rows[first] + count));
      else for (let r = 0; r < count; r++) into[r] = values[rows[first + r]];
      kernel.binColumn(f, count);
    } else if (column.kind !== "categorical") {
      const values = column.values;
      const e = 256 * f;
      for (let r = 0; r < count; r++) {
        const b = binOf(edges, e, values[rows[first + r]]);
        block[r * stride + f] = b;
        // b + 1, and 0 for the missing bin (255 + 1 wraps in a byte).
        block[r * stride + features + f] = b + 1;
      }
    }
  }
}

function scoreBlock(c: CompiledTrees, bins: Uint8Array, count: number, first: number, outputs: number, raw: Float64Array): void {
  const node = c.node;
  const value = c.value;
  const stride = 2 * c.features;
  for (let t = 0; t < c.treeCount; t++) {
    const root = c.root[t];
    const depth = c.depth[t];
    const out = first * outputs + (t % outputs);
    let r = 0;
    for (; r + 7 < count; r += 8) {
      const b0 = r * stride;
      const b1 = b0 + stride;
      const b2 = b1 + stride;
      const b3 = b2 + stride;
      const b4 = b3 + stride;
      const b5 = b4 + stride;
      const b6 = b5 + stride;
      const b7 = b6 + stride;
      let n0 = root;
      let n1 = root;
      let n2 = root;
      let n3 = root;
      let n4 = root;
      let n5 = root;
      let n6 = root;
      let n7 = root;
      for (let s = 0; s < depth; s++) {
        // right = bin > threshold, as the sign bit of threshold − bin.
        let p = node[2 * n0];
        n0 = node[2 * n0 + 1] + (((p >>> 16) - bins[b0 + (p & 0xffff)]) >>> 31);
        p = node[2 * n1];
        n1 = node[2 * n1 + 1] + (((p >>> 16) - bins[b1 + (p & 0xffff)]) >>> 31);
        p = node[2 * n2];
        n2 = node[2 * n2 + 1] + (((p >>> 16) - bins[b2 + (p & 0xffff)]) >>> 31);
        p = node[2 * n3];
        n3 = node[2 * n3 + 1] + (((p >>> 16) - bins[b3 + (p & 0xffff)]) >>> 31);
        p = node[2 * n4];
        n4 = node[2 * n4 + 1] + (((p >>> 16) - bins[b4 + (p & 0xffff)]) >>> 31);
        p = node[2 * n5];
        n5 = node[2 * n5 + 1] + (((p >>> 16) - bins[b5 + (p & 0xffff)]) >>> 31);
        p = node[2 * n6];
        n6 = node[2 * n6 + 1] + (((p >>> 16) - bins[b6 + (p & 0xffff)]) >>> 31);
        p = node[2 * n7];
        n7 = node[2 * n7 + 1] + (((p >>> 16) - bins[b7 + (p & 0xffff)]) >>> 31);
      }
      const o = out + r * outputs;
      raw[o] += value[n0];
      raw[o + outputs] += value[n1];
      raw[o + 2 * outputs] += value[n2];
      raw[o + 3 * outputs] += value[n3];
      raw[o + 4 * outputs] += value[n4];
      raw[o + 5 * outputs] += value[n5];
      raw[o + 6 * outputs] += value[n6];
      raw[o + 7 * outputs] += value[n7];
    }
    for (; r < count; r++) {
      const base = r * stride;
      let n0 = root;
      for (let s = 0; s < depth; s++) {
        const p = node[2 * n0];
        n0 = node[2 * n0 + 1] + (((p >>> 16) - bins[base + (p & 0xffff)]) >>> 31);
      }
      raw[out + r * outputs] += value[n0];
    }
  }
}

function scoreBlockWithCategories(c: CompiledTrees, bins: Uint8Array, count: number, first: number, outputs: number, raw: Float64Array): void {
  const node = c.node;
  const value = c.value;
  const set = c.set;
  const sets = c.bits;
  const stride = 2 * c.features;
  for (let t = 0; t < c.treeCount; t++) {
    const root = c.root[t];
    const depth = c.depth[t];
    const out = first * outputs + (t % outputs);
    for (let r = 0; r < count; r++) {
      const base = r * stride;
      let n0 = root;
      for (let s = 0; s < depth; s++) {
        const p = node[2 * n0];
        const b = bins[base + (p & 0xffff)];
        const right =
          (p & CATEGORICAL_FLAG) === 0
            ? ((p >>> 16) - b) >>> 31
            : 1 ^ ((sets[set[n0] * BITSET_WORDS + (b >>> 5)] >>> (b & 31)) & 1);
        n0 = node[2 * n0 + 1] + right;
      }
      raw[out + r * outputs] += value[n0];
    }
  }
}
