import type { TreeGrower } from "./grow-tree.js";
import { BITSET_WORDS } from "./split-gain.js";

/**
 * The trees of a fitted model in flat arrays. Trees are stored round by round (with C outputs,
 * tree t adds to output t mod C). Node indices are local to their tree: node 0 is the root,
 * `left[n]` is the left child and the right child is `left[n] + 1`; `feature[n]` is −1 at a leaf.
 * A numeric node sends training bins <= `threshold[n]` left; a categorical node sends the
 * category bins of its 256-bit set `bits[set[n] * 8 ..]` left. Missing values go left when
 * `missingLeft[n]` is 1. Leaf values already include the learning rate.
 */
export interface TreeEnsemble {
  readonly treeCount: number;
  /** First node of tree t; `treeStart[treeCount]` is the node count. */
  readonly treeStart: Int32Array;
  readonly feature: Int32Array;
  readonly threshold: Int32Array;
  readonly missingLeft: Uint8Array;
  /** Category set of a categorical node, −1 for numeric nodes and leaves. */
  readonly set: Int32Array;
  readonly left: Int32Array;
  readonly value: Float64Array;
  readonly bits: Uint32Array;
}

function grown<T extends Int32Array | Uint8Array | Uint32Array | Float64Array>(array: T, needed: number): T {
  if (needed <= array.length) return array;
  const bigger = new (array.constructor as new (n: number) => T)(Math.max(needed, 2 * array.length));
  bigger.set(array);
  return bigger;
}

/** Collects grown trees into an ensemble; can cut it back to its first trees (early stopping). */
export class EnsembleBuilder {
  private treeStart = new Int32Array(64);
  private setStart = new Int32Array(64);
  private feature = new Int32Array(1024);
  private threshold = new Int32Array(1024);
  private missingLeft = new Uint8Array(1024);
  private set = new Int32Array(1024);
  private left = new Int32Array(1024);
  private value = new Float64Array(1024);
  private bits = new Uint32Array(64);
  private trees = 0;
  private nodes = 0;
  private sets = 0;

  get treeCount(): number {
    return this.trees;
  }

  append(tree: TreeGrower): void {
    const count = tree.nodeCount;
    const nodes = this.nodes + count;
    this.treeStart = grown(this.treeStart, this.trees + 2);
    this.setStart = grown(this.setStart, this.trees + 2);
    this.feature = grown(this.feature, nodes);
    this.threshold = grown(this.threshold, nodes);
    this.missingLeft = grown(this.missingLeft, nodes);
    this.set = grown(this.set, nodes);
    this.left = grown(this.left, nodes);
    this.value = grown(this.value, nodes);
    for (let n = 0; n < count; n++) {
      const at = this.nodes + n;
      const feature = tree.nodeFeature[n];
      this.feature[at] = feature;
      this.value[at] = feature < 0 ? tree.nodeValue[n] : 0;
      this.left[at] = feature < 0 ? 0 : tree.nodeLeft[n];
      this.threshold[at] = feature < 0 || tree.nodeCategorical[n] === 1 ? 0 : tree.nodeThreshold[n];
      this.missingLeft[at] = feature < 0 ? 0 : tree.nodeMissingLeft[n];
      if (feature >= 0 && tree.nodeCategorical[n] === 1) {
        this.bits = grown(this.bits, (this.sets + 1) * BITSET_WORDS);
        for (let w = 0; w < BITSET_WORDS; w++) this.bits[this.sets * BITSET_WORDS + w] = tree.nodeBits[n * BITSET_WORDS + w];
        this.set[at] = this.sets++;
      } else {
        this.set[at] = -1;
      }
    }
    this.nodes = nodes;
    this.trees++;
    this.treeStart[this.trees] = nodes;
    this.setStart[this.trees] = this.sets;
  }

  /** The first `treeCount` trees, in arrays of exactly their size. */
  finish(treeCount: number = this.trees): TreeEnsemble {
    const nodes = this.treeStart[treeCount];
    const sets = this.setStart[treeCount];
    return {
      treeCount,
      treeStart: this.treeStart.slice(0, treeCount + 1),
      feature: this.feature.slice(0, nodes),
      threshold: this.threshold.slice(0, nodes),
      missingLeft: this.missingLeft.slice(0, nodes),
      set: this.set.slice(0, nodes),
      left: this.left.slice(0, nodes),
      value: this.value.slice(0, nodes),
      bits: this.bits.slice(0, sets * BITSET_WORDS),
    };
  }
}
