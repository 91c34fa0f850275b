import { buildHistogram, type HistogramLayout, subtractHistogram } from "./histogram.js";
import { BITSET_WORDS, CategoryScratch, findBestSplit, leafWeight, type SplitRules, SplitStore } from "./split-gain.js";

/** Bytes the histogram pool may take; beyond it, leaves waiting to be split lose theirs and rebuild later. */
export const HISTOGRAM_POOL_BYTES = 256 * 1024 * 1024;

/**
 * Training rows binned for growing. `columnBins[f][r]` is the local bin of position r on feature
 * f (missing values in bin valueBins[f]), read when partitioning a node on one feature;
 * `rowBins` holds the same bins row by row, read when building histograms.
 */
export interface GrowingData {
  readonly columnBins: readonly Uint8Array[];
  readonly rowBins: Uint8Array;
  readonly layout: HistogramLayout;
  readonly categorical: Uint8Array;
  readonly rowCount: number;
}

export interface GrowingLimits extends SplitRules {
  readonly maxLeaves: number;
  /** Maximum depth (root = 0), or Infinity. */
  readonly maxDepth: number;
  /** Multiplies every leaf weight (shrinkage). */
  readonly learningRate: number;
}

/**
 * Grows one regression tree on gradients and hessians, leaf-wise (best-first: always split the
 * leaf whose best split gains most; Ke et al. 2017), until `maxLeaves` leaves or no split gains.
 *
 * The rows of the tree live in `rows`, partitioned in place so every leaf owns one contiguous
 * range. Only the smaller child's histogram is built; the larger one is the parent's minus it,
 * computed in the parent's buffer (histogram subtraction). All buffers are allocated once per
 * fit and reused by every node and every tree.
 *
 * The tree is kept in flat node arrays: node 0 is the root, children come in pairs
 * (right = left + 1), `nodeFeature` is −1 at a leaf.
 */
export class TreeGrower {
  readonly rows: Uint32Array;
  private readonly spill: Uint32Array;

  private readonly pool: Float64Array;
  private readonly freeSlots: Int32Array;
  private freeCount = 0;

  private readonly splits: SplitStore;
  private readonly scratch = new CategoryScratch();
  private readonly goesLeft = new Uint8Array(256);

  // Leaves of the tree being grown, by leaf index.
  readonly leafStart: Int32Array;
  readonly leafEnd: Int32Array;
  readonly leafNode: Int32Array;
  private readonly leafDepth: Int32Array;
  private readonly leafGrad: Float64Array;
  private readonly leafHess: Float64Array;
  private readonly leafSlot: Int32Array;
  leafCount = 0;

  // Nodes of the tree being grown.
  readonly nodeFeature: Int32Array;
  /** Numeric: local bins <= threshold go left. Categorical: unused (the set is in nodeBits). */
  readonly nodeThreshold: Int32Array;
  readonly nodeMissingLeft: Uint8Array;
  readonly nodeCategorical: Uint8Array;
  readonly nodeBits: Uint32Array;
  readonly nodeLeft: Int32Array;
  readonly nodeValue: Float64Array;
  nodeCount = 0;
  /** Depth of the deepest leaf of the last tree. */
  depth = 0;

  /** Whether histograms carry row counts (needed for min_leaf > 1; squared error gets them free). */
  private readonly counts: boolean;
  /** The split rules as the search applies them (min_leaf 0 when histograms have no counts). */
  private readonly rules: SplitRules;

  constructor(
    private readonly data: GrowingData,
    private readonly limits: GrowingLimits,
    private readonly constantHessian: boolean,
    poolBytes: number = HISTOGRAM_POOL_BYTES,
  ) {
    this.counts = constantHessian || limits.minLeaf > 1;
    this.rules = { l2: limits.l2, minLeaf: this.counts ? limits.minLeaf : 0, minHessian: limits.minHessian, minGain: limits.minGain };
    const n = data.rowCount;
    const leaves = limits.maxLeaves;
    this.rows = new Uint32Array(n);
    this.spill = new Uint32Array(n);
    const length = data.layout.length;
    const slots = Math.min(leaves, Math.max(3, Math.floor(poolBytes / (8 * length))));
    this.pool = new Float64Array(slots * length);
    this.freeSlots = new Int32Array(slots);
    this.splits = new SplitStore(leaves);
    this.leafStart = new Int32Array(leaves);
    this.leafEnd = new Int32Array(leaves);
    this.leafNode = new Int32Array(leaves);
    this.leafDepth = new Int32Array(leaves);
    this.leafGrad = new Float64Array(leaves);
    this.leafHess = new Float64Array(leaves);
    this.leafSlot = new Int32Array(leaves);
    const nodes = 2 * leaves - 1;
    this.nodeFeature = new Int32Array(nodes);
    this.nodeThreshold = new Int32Array(nodes);
    this.nodeMissingLeft = new Uint8Array(nodes);
    this.nodeCategorical = new Uint8Array(nodes);
    this.nodeBits = new Uint32Array(nodes * BITSET_WORDS);
    this.nodeLeft = new Int32Array(nodes);
    this.nodeValue = new Float64Array(nodes);
  }

  /**
   * Grows a tree on `this.rows[0..rowCount)` (filled by the caller) with the gradients of one
   * output, trying splits on `features[0..featureCount)` only.
   */
  grow(grad: Float64Array, hess: Float64Array, rowCount: number, features: Int32Array, featureCount: number): void {
    const limits = this.limits;
    const splits = this.splits;
    const layout = this.data.layout;
    this.freeCount = this.freeSlots.length;
    for (let s = 0; s < this.freeCount; s++) this.freeSlots[s] = this.freeCount - 1 - s;

    let g = 0;
    let h = 0;
    for (let i = 0; i < rowCount; i++) {
      g += grad[this.rows[i]];
      h += hess[this.rows[i]];
    }
    this.nodeCount = 1;
    this.nodeFeature[0] = -1;
    this.leafCount = 1;
    this.depth = 0;
    this.leafStart[0] = 0;
    this.leafEnd[0] = rowCount;
    this.leafNode[0] = 0;
    this.leafDepth[0] = 0;
    this.leafGrad[0] = g;
    this.leafHess[0] = h;
    this.leafSlot[0] = -1;
    splits.gain[0] = -Infinity;
    if (this.splittable(0)) {
      const slot = this.takeSlot(0, 0);
      this.leafSlot[0] = slot;
      this.build(slot, 0, rowCount, grad, hess, features, featureCount);
      this.search(0, features, featureCount);
    }

    while (this.leafCount < limits.maxLeaves) {
      let parent = -1;
      let best = -Infinity;
      for (let leaf = 0; leaf < this.leafCount; leaf++) {
        if (splits.gain[leaf] > best) {
          best = splits.gain[leaf];
          parent = leaf;
        }
      }
      if (parent < 0) break;
      this.split(parent, grad, hess, features, featureCount);
    }

    for (let leaf = 0; leaf < this.leafCount; leaf++) {
      this.nodeValue[this.leafNode[leaf]] = limits.learningRate * leafWeight(this.leafGrad[leaf], this.leafHess[leaf], limits.l2);
      this.depth = Math.max(this.depth, this.leafDepth[leaf]);
    }
  }

  /** Whether a leaf may still be split: depth limit, room for two children of min_leaf rows and min_hessian. */
  private splittable(leaf: number): boolean {
    const limits = this.limits;
    return (
      this.leafDepth[leaf] < limits.maxDepth &&
      this.leafEnd[leaf] - this.leafStart[leaf] >= 2 * limits.minLeaf &&
      this.leafHess[leaf] >= 2 * limits.minHessian
    );
  }

  private split(parent: number, grad: Float64Array, hess: Float64Array, features: Int32Array, featureCount: number): void {
    const splits = this.splits;
    const data = this.data;
    const feature = splits.feature[parent];
    const bins = data.layout.valueBins[feature];
    const categorical = splits.categorical[parent];

    // The node becomes internal; its children are the next two nodes.
    const node = this.leafNode[parent];
    const left = this.nodeCount;
    this.nodeCount += 2;
    this.nodeFeature[node] = feature;
    this.nodeThreshold[node] = splits.threshold[parent];
    this.nodeMissingLeft[node] = splits.missingLeft[parent];
    this.nodeCategorical[node] = categorical;
    this.nodeLeft[node] = left;
    this.nodeFeature[left] = -1;
    this.nodeFeature[left + 1] = -1;
    if (categorical === 1) for (let w = 0; w < BITSET_WORDS; w++) this.nodeBits[node * BITSET_WORDS + w] = splits.bits[parent * BITSET_WORDS + w];

    const goesLeft = this.goesLeft;
    if (categorical === 1) {
      const word = parent * BITSET_WORDS;
      for (let b = 0; b < bins; b++) goesLeft[b] = (splits.bits[word + (b >>> 5)] >>> (b & 31)) & 1;
    } else {
      const threshold = splits.threshold[parent];
      for (let b = 0; b < bins; b++) goesLeft[b] = b <= threshold ? 1 : 0;
    }
    goesLeft[bins] = splits.missingLeft[parent];

    // Stable partition: left rows compacted in place, right rows spilled and copied after them.
    const start = this.leafStart[parent];
    const end = this.leafEnd[parent];
    const column = data.columnBins[feature];
    const rows = this.rows;
    const spill = this.spill;
    let l = start;
    let r = 0;
    let missing = 0;
    for (let i = start; i < end; i++) {
      const row = rows[i];
      // Branch-free: the row is written to both places and only one cursor moves.
      const b = column[row];
      const goes = goesLeft[b];
      rows[l] = row;
      spill[r] = row;
      l += goes;
      r += 1 - goes;
      missing += +(b === bins);
    }
    for (let i = 0; i < r; i++) rows[l + i] = spill[i];
    // A node that saw no missing values sends them, at predict time, to the child with more rows.
    if (missing === 0) this.nodeMissingLeft[node] = l - start >= r ? 1 : 0;

    const right = this.leafCount++;
    const depth = this.leafDepth[parent] + 1;
    const parentGrad = this.leafGrad[parent];
    const parentHess = this.leafHess[parent];
    const parentSlot = this.leafSlot[parent];
    this.leafEnd[parent] = l;
    this.leafNode[parent] = left;
    this.leafDepth[parent] = depth;
    this.leafGrad[parent] = splits.leftGrad[parent];
    this.leafHess[parent] = splits.leftHess[parent];
    this.leafSlot[parent] = -1;
    this.leafStart[right] = l;
    this.leafEnd[right] = end;
    this.leafNode[right] = left + 1;
    this.leafDepth[right] = depth;
    this.leafGrad[right] = parentGrad - splits.leftGrad[parent];
    this.leafHess[right] = parentHess - splits.leftHess[parent];
    this.leafSlot[right] = -1;
    splits.gain[parent] = -Infinity;
    splits.gain[right] = -Infinity;

    // No histograms when neither child may be split (depth limit, too few rows, last leaf).
    const more = this.leafCount < this.limits.maxLeaves;
    const leftOpen = more && this.splittable(parent);
    const rightOpen = more && this.splittable(right);
    if (!leftOpen && !rightOpen) {
      if (parentSlot >= 0) this.release(parentSlot);
      return;
    }
    const leftSmaller = l - start <= end - l;
    const small = leftSmaller ? parent : right;
    const large = leftSmaller ? right : parent;
    const smallOpen = leftSmaller ? leftOpen : rightOpen;
    const largeOpen = leftSmaller ? rightOpen : leftOpen;
    if (parentSlot >= 0 && largeOpen) {
      const slot = this.takeSlot(parent, right);
      this.build(slot, this.leafStart[small], this.leafEnd[small], grad, hess, features, featureCount);
      subtractHistogram(this.pool, parentSlot * this.data.layout.length, slot * this.data.layout.length, data.layout, features, featureCount);
      this.leafSlot[large] = parentSlot;
      if (smallOpen) this.leafSlot[small] = slot;
      else this.release(slot);
    } else {
      if (parentSlot >= 0) this.release(parentSlot);
      if (leftOpen) this.buildFor(parent, right, grad, hess, features, featureCount);
      if (rightOpen) this.buildFor(right, parent, grad, hess, features, featureCount);
    }
    if (leftOpen) this.search(parent, features, featureCount);
    else this.dropSlot(parent);
    if (rightOpen) this.search(right, features, featureCount);
    else this.dropSlot(right);
  }

  /** Builds the histogram of `leaf` directly into a new buffer (its parent's was given up). */
  private buildFor(leaf: number, sibling: number, grad: Float64Array, hess: Float64Array, features: Int32Array, featureCount: number): void {
    const slot = this.takeSlot(leaf, sibling);
    this.build(slot, this.leafStart[leaf], this.leafEnd[leaf], grad, hess, features, featureCount);
    this.leafSlot[leaf] = slot;
  }

  private build(slot: number, start: number, end: number, grad: Float64Array, hess: Float64Array, features: Int32Array, featureCount: number): void {
    const data = this.data;
    buildHistogram(
      this.pool,
      slot * data.layout.length,
      data.layout,
      data.rowBins,
      features,
      featureCount,
      this.rows,
      start,
      end,
      grad,
      hess,
      this.counts,
      this.constantHessian,
    );
  }

  private search(leaf: number, features: Int32Array, featureCount: number): void {
    const data = this.data;
    const slot = this.leafSlot[leaf];
    findBestSplit(
      this.pool,
      slot * data.layout.length,
      data.layout,
      data.categorical,
      features,
      featureCount,
      this.leafGrad[leaf],
      this.leafHess[leaf],
      this.leafEnd[leaf] - this.leafStart[leaf],
      this.rules,
      this.splits,
      leaf,
      this.scratch,
    );
    // A leaf that cannot be split no longer needs its histogram.
    if (this.splits.gain[leaf] === -Infinity) this.dropSlot(leaf);
  }

  private dropSlot(leaf: number): void {
    if (this.leafSlot[leaf] >= 0) this.release(this.leafSlot[leaf]);
    this.leafSlot[leaf] = -1;
  }

  private release(slot: number): void {
    this.freeSlots[this.freeCount++] = slot;
  }

  /**
   * A free histogram buffer. When the pool is exhausted, the waiting leaf with the smallest
   * gain (the least likely to be split next) gives up its histogram; it is rebuilt if that
   * leaf is split later. The two children of the split in progress are never robbed.
   */
  private takeSlot(childA: number, childB: number): number {
    if (this.freeCount > 0) return this.freeSlots[--this.freeCount];
    let victim = -1;
    let lowest = Infinity;
    for (let leaf = 0; leaf < this.leafCount; leaf++) {
      if (leaf === childA || leaf === childB || this.leafSlot[leaf] < 0) continue;
      if (this.splits.gain[leaf] < lowest) {
        lowest = this.splits.gain[leaf];
        victim = leaf;
      }
    }
    const slot = this.leafSlot[victim];
    this.leafSlot[victim] = -1;
    return slot;
  }

  /** The leaf node a training position falls in, following the tree just grown (local bins). */
  leafOf(position: number): number {
    const columnBins = this.data.columnBins;
    const valueBins = this.data.layout.valueBins;
    let node = 0;
    while (this.nodeFeature[node] >= 0) {
      const f = this.nodeFeature[node];
      const b = columnBins[f][position];
      let left: boolean;
      if (b === valueBins[f]) left = this.nodeMissingLeft[node] === 1;
      else if (this.nodeCategorical[node] === 1) left = ((this.nodeBits[node * BITSET_WORDS + (b >>> 5)] >>> (b & 31)) & 1) === 1;
      else left = b <= this.nodeThreshold[node];
      node = this.nodeLeft[node] + (left ? 0 : 1);
    }
    return node;
  }
}
