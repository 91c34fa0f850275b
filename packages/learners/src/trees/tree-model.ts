/**
 * A fitted decision tree as flat typed arrays (one entry per node), traversed by bin.
 *
 * Node i is a leaf when `feature[i] < 0`; then `left[i]` is its row in `leafValues`
 * (`width` numbers: class probabilities or the predicted value). Otherwise a row with bin b on
 * `feature[i]` goes left when
 *   - numeric split (`categorySet[i] < 0`): b <= threshold[i], and a missing value (b = 255)
 *     goes left when `missingLeft[i]` is 1;
 *   - categorical split: bit b of the 256-bit set at `bitsets[categorySet[i] * 8 ...]` is set
 *     (bit 255, the missing bin, carries the learned direction of missing values).
 * Children always have larger ids than their parent, so a traversal always ends.
 */
export interface TreeArrays {
  readonly nodeCount: number;
  readonly feature: Int32Array;
  readonly threshold: Uint8Array;
  readonly missingLeft: Uint8Array;
  readonly left: Int32Array;
  readonly right: Int32Array;
  readonly categorySet: Int32Array;
  readonly bitsets: Uint32Array;
  readonly leafValues: Float64Array;
}

/** Words of one category bitset: 256 bins, 32 bits a word. */
export const BITSET_WORDS = 8;

/** Appends nodes while a tree grows; `finish` copies out exact-length arrays. */
export class TreeBuilder {
  readonly width: number;
  nodeCount = 0;
  leafCount = 0;
  setCount = 0;
  feature = new Int32Array(64);
  threshold = new Uint8Array(64);
  missingLeft = new Uint8Array(64);
  left = new Int32Array(64);
  right = new Int32Array(64);
  categorySet = new Int32Array(64);
  bitsets = new Uint32Array(8 * BITSET_WORDS);
  leafValues: Float64Array;

  constructor(width: number) {
    this.width = width;
    this.leafValues = new Float64Array(64 * width);
  }

  reset(): void {
    this.nodeCount = 0;
    this.leafCount = 0;
    this.setCount = 0;
  }

  /** Reserves a node id (its fields are written by `setLeaf` or `setNumericSplit`/`setCategoricalSplit`). */
  addNode(): number {
    if (this.nodeCount === this.feature.length) {
      const size = this.feature.length * 2;
      this.feature = grow(this.feature, new Int32Array(size));
      this.threshold = grow(this.threshold, new Uint8Array(size));
      this.missingLeft = grow(this.missingLeft, new Uint8Array(size));
      this.left = grow(this.left, new Int32Array(size));
      this.right = grow(this.right, new Int32Array(size));
      this.categorySet = grow(this.categorySet, new Int32Array(size));
    }
    return this.nodeCount++;
  }

  /** Makes `node` a leaf; returns the offset of its `width` values in `leafValues` for the caller to fill. */
  setLeaf(node: number): number {
    const leaf = this.leafCount++;
    if ((leaf + 1) * this.width > this.leafValues.length) this.leafValues = grow(this.leafValues, new Float64Array(this.leafValues.length * 2));
    this.feature[node] = -1;
    this.left[node] = leaf;
    this.right[node] = -1;
    this.categorySet[node] = -1;
    this.threshold[node] = 0;
    this.missingLeft[node] = 0;
    return leaf * this.width;
  }

  setNumericSplit(node: number, feature: number, threshold: number, missingLeft: boolean, left: number, right: number): void {
    this.feature[node] = feature;
    this.threshold[node] = threshold;
    this.missingLeft[node] = missingLeft ? 1 : 0;
    this.categorySet[node] = -1;
    this.left[node] = left;
    this.right[node] = right;
  }

  /** `set` holds BITSET_WORDS words from `offset`: the bins going left (bit 255 = missing values). */
  setCategoricalSplit(node: number, feature: number, set: Uint32Array, offset: number, left: number, right: number): void {
    const index = this.setCount++;
    if ((index + 1) * BITSET_WORDS > this.bitsets.length) this.bitsets = grow(this.bitsets, new Uint32Array(this.bitsets.length * 2));
    this.bitsets.set(set.subarray(offset, offset + BITSET_WORDS), index * BITSET_WORDS);
    this.feature[node] = feature;
    this.threshold[node] = 0;
    this.missingLeft[node] = (set[offset + 7] >>> 31) & 1;
    this.categorySet[node] = index;
    this.left[node] = left;
    this.right[node] = right;
  }

  finish(): TreeArrays {
    const n = this.nodeCount;
    return {
      nodeCount: n,
      feature: this.feature.slice(0, n),
      threshold: this.threshold.slice(0, n),
      missingLeft: this.missingLeft.slice(0, n),
      left: this.left.slice(0, n),
      right: this.right.slice(0, n),
      categorySet: this.categorySet.slice(0, n),
      bitsets: this.bitsets.slice(0, this.setCount * BITSET_WORDS),
      leafValues: this.leafValues.slice(0, this.leafCount * this.width),
    };
  }
}

function grow<T extends Int32Array | Uint8Array | Uint32Array | Float64Array>(from: T, to: T): T {
  to.set(from);
  return to;
}
