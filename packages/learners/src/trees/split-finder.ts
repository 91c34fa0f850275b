import { MISSING_BIN } from "../binning/bin-mapper.js";
import type { HistogramPool } from "./histogram-pool.js";
import { CRITERION_ENTROPY, CRITERION_GINI, type CriterionCode, entropyProxy, giniProxy, squaredErrorProxy } from "./impurity.js";
import { BITSET_WORDS } from "./tree-model.js";

/**
 * Finds a node's best split from its per-feature histograms and keeps the best seen so far.
 *
 * Missing values: every candidate is tried with the node's missing rows on the left and on the
 * right, and the better direction is kept (sparsity-aware split finding, Chen & Guestrin 2016,
 * Algorithm 3). When the node has no missing values on the feature, missing values are sent to
 * the child with more rows, so unseen missing values follow the majority.
 *
 * Categorical features: the node's categories are ordered by their rate of the positive class
 * (binary) or their mean target (regression) and the prefixes of that order are scanned; this
 * finds the best of all 2^(k−1) partitions for two classes and for squared error (Fisher 1958;
 * Breiman et al. 1984, CART). For more than two classes no such order exists; we scan one
 * order per class (the categories by their rate of class c, one-vs-rest) and keep the best, a
 * heuristic that costs C scans instead of 2^(k−1) partitions.
 */
export class SplitFinder {
  private readonly pool: HistogramPool;
  /** Statistics per side: C class counts, or [Σ count, Σ count·y]. */
  private readonly width: number;
  private readonly classWeight: Float64Array;
  private readonly criterion: CriterionCode;
  private readonly minLeaf: number;

  // Best split so far in the current node.
  found = false;
  /** Counts every new best (callers compare it before and after `considerCut`). */
  updates = 0;
  score = -Infinity;
  feature = -1;
  categorical = false;
  threshold = 0;
  missingLeft = false;
  leftRows = 0;
  readonly leftStats: Float64Array;
  /** Bins going left for a categorical split, bit 255 = missing values. */
  readonly leftSet = new Uint32Array(BITSET_WORDS);

  private total: Float64Array;
  private rows = 0;
  /** Left statistics of the cut being scored (filled by the scans, or by the caller of `considerCut`). */
  readonly cumulative: Float64Array;
  /** Statistics and rows of the node's missing values on the feature being scored. */
  readonly missing: Float64Array;
  missingRows = 0;
  /** Bins of a categorical left set being scored (the first `-threshold` entries). */
  readonly order = new Uint8Array(256);
  private readonly left: Float64Array;
  private readonly right: Float64Array;
  private readonly binList = new Uint8Array(256);
  private readonly orderScratch = new Uint8Array(256);
  private readonly keys = new Float64Array(256);

  constructor(pool: HistogramPool, width: number, classWeight: Float64Array, criterion: CriterionCode, minLeaf: number) {
    this.pool = pool;
    this.width = width;
    this.classWeight = classWeight;
    this.criterion = criterion;
    this.minLeaf = minLeaf;
    this.leftStats = new Float64Array(width);
    this.total = new Float64Array(width);
    this.cumulative = new Float64Array(width);
    this.missing = new Float64Array(width);
    this.left = new Float64Array(width);
    this.right = new Float64Array(width);
  }

  /** Whether the best split so far leaves one class on each side (classification). */
  splitsPurely(): boolean {
    let leftClasses = 0;
    let rightClasses = 0;
    for (let k = 0; k < this.width; k++) {
      if (this.leftStats[k] > 0) leftClasses++;
      if (this.total[k] - this.leftStats[k] > 0) rightClasses++;
    }
    return leftClasses <= 1 && rightClasses <= 1;
  }

  beginNode(total: Float64Array, rows: number): void {
    this.total = total;
    this.rows = rows;
    this.found = false;
    this.score = -Infinity;
    this.feature = -1;
  }

  /** Best threshold (numeric) or category set (categorical) of one feature; false when the feature is constant in the node. */
  bestCut(feature: number, slot: number, categorical: boolean): boolean {
    const values = this.loadBins(slot);
    if (values < 0) return false;
    if (categorical) this.scanCategories(feature, slot, values);
    else if (this.width === 2 && this.criterion !== CRITERION_ENTROPY) this.scanThresholdsTwo(feature, slot, values);
    else this.scanThresholds(feature, slot, values);
    return true;
  }

  /**
   * scanThresholds for two statistics (two classes under Gini, or squared error), with the
   * proxies written out on scalars: this scan runs for every feature tried at every node.
   */
  private scanThresholdsTwo(feature: number, slot: number, values: number): void {
    const bins = this.binList;
    const hist = this.pool.values;
    const base = slot * this.pool.slotSize;
    const gini = this.criterion === CRITERION_GINI;
    // Squared error: the proxy S²/W of [W, S] is the Gini form with weights (0, 1) over W.
    const w0 = gini ? this.classWeight[0] : 0;
    const w1 = gini ? this.classWeight[1] : 1;
    const total0 = this.total[0];
    const total1 = this.total[1];
    const missing0 = this.missing[0];
    const missing1 = this.missing[1];
    const missingRows = this.missingRows;
    const rows = this.rows;
    const minLeaf = this.minLeaf;
    let best = this.score;
    let left0 = 0;
    let left1 = 0;
    let leftRows = 0;
    for (let j = 0; j < values; j++) {
      const o = base + bins[j] * 3;
      leftRows += hist[o];
      left0 += hist[o + 1];
      left1 += hist[o + 2];
      for (let side = 0; side < 2; side++) {
        const withMissing = side === 1;
        if (withMissing && missingRows === 0) break;
        const rowsLeft = withMissing ? leftRows + missingRows : leftRows;
        if (rowsLeft < minLeaf || rows - rowsLeft < minLeaf) continue;
        const l0 = withMissing ? left0 + missing0 : left0;
        const l1 = withMissing ? left1 + missing1 : left1;
        const r0 = total0 - l0;
        const r1 = total1 - l1;
        let score: number;
        if (gini) {
          const a = w0 * l0;
          const b = w1 * l1;
          const c = w0 * r0;
          const d = w1 * r1;
          score = (a * a + b * b) / (a + b) + (c * c + d * d) / (c + d);
        } else {
          score = (l1 * l1) / l0 + (r1 * r1) / r0;
        }
        if (!(score > best)) continue;
        best = score;
        this.record(score, feature, cutBetween(bins, j, values), rowsLeft, l0, l1, withMissing);
      }
    }
  }

  private record(score: number, feature: number, threshold: number, rowsLeft: number, left0: number, left1: number, withMissing: boolean): void {
    this.found = true;
    this.updates++;
    this.score = score;
    this.feature = feature;
    this.categorical = false;
    this.threshold = threshold;
    this.leftRows = rowsLeft;
    this.leftStats[0] = left0;
    this.leftStats[1] = left1;
    this.missingLeft = this.missingRows === 0 ? rowsLeft >= this.rows - rowsLeft : withMissing;
  }

  /**
   * Lists the slot's non-empty bins into binList and the missing statistics into `missing`;
   * returns the number of non-empty value bins, or −1 when no split can separate the node's rows.
   */
  private loadBins(slot: number): number {
    const count = this.pool.listBins(slot, this.binList);
    const hasMissing = count > 0 && this.binList[count - 1] === MISSING_BIN;
    const values = hasMissing ? count - 1 : count;
    if (values === 0 || (values === 1 && !hasMissing)) return -1;
    const hist = this.pool.values;
    const o = slot * this.pool.slotSize + MISSING_BIN * this.pool.stride;
    for (let k = 0; k < this.width; k++) this.missing[k] = hist[o + 1 + k];
    this.missingRows = hist[o];
    return values;
  }

  private scanThresholds(feature: number, slot: number, values: number): void {
    const bins = this.binList;
    const hist = this.pool.values;
    const stride = this.pool.stride;
    const base = slot * this.pool.slotSize;
    const width = this.width;
    const cumulative = this.cumulative;
    cumulative.fill(0);
    let cumulativeRows = 0;
    for (let j = 0; j < values; j++) {
      const o = base + bins[j] * stride;
      cumulativeRows += hist[o];
      for (let k = 0; k < width; k++) cumulative[k] += hist[o + 1 + k];
      this.considerCut(feature, cutBetween(bins, j, values), cumulativeRows, false);
    }
  }

  private scanCategories(feature: number, slot: number, values: number): void {
    const bins = this.binList;
    const hist = this.pool.values;
    const stride = this.pool.stride;
    const base = slot * this.pool.slotSize;
    const width = this.width;
    const regression = this.criterion !== CRITERION_GINI && this.criterion !== CRITERION_ENTROPY;
    // Two classes: ordering by class 1's rate is ordering by class 0's rate reversed, same prefixes.
    const orderings = regression || width === 2 ? 1 : width;
    const cumulative = this.cumulative;
    const order = this.order;
    const keys = this.keys;
    for (let ordering = 0; ordering < orderings; ordering++) {
      const cls = width === 2 ? 1 : ordering;
      for (let j = 0; j < values; j++) {
        const o = base + bins[j] * stride;
        order[j] = bins[j];
        if (regression) keys[bins[j]] = hist[o + 2] / hist[o + 1];
        else {
          let total = 0;
          for (let k = 0; k < width; k++) total += this.classWeight[k] * hist[o + 1 + k];
          keys[bins[j]] = (this.classWeight[cls] * hist[o + 1 + cls]) / total;
        }
      }
      sortByKey(order, values, keys, this.orderScratch);
      cumulative.fill(0);
      let cumulativeRows = 0;
      for (let j = 0; j < values; j++) {
        const o = base + order[j] * stride;
        cumulativeRows += hist[o];
        for (let k = 0; k < width; k++) cumulative[k] += hist[o + 1 + k];
        // The set is the first j+1 bins of `order`; −(j+1) tells `consider` how many.
        this.considerCut(feature, -(j + 1), cumulativeRows, true);
      }
    }
  }

  /**
   * Scores the split with `cumulative` (and `leftRows` rows) on the left, once with the
   * missing rows on the right and once with them on the left. For categorical splits
   * `threshold` is −(size of the left set), the set being the first bins of `order`.
   */
  considerCut(feature: number, threshold: number, leftRows: number, categorical: boolean): void {
    const width = this.width;
    const left = this.left;
    const right = this.right;
    const total = this.total;
    const cumulative = this.cumulative;
    const minLeaf = this.minLeaf;
    for (let side = 0; side < 2; side++) {
      const withMissing = side === 1;
      if (withMissing && this.missingRows === 0) break;
      const rowsLeft = withMissing ? leftRows + this.missingRows : leftRows;
      const rowsRight = this.rows - rowsLeft;
      if (rowsLeft < minLeaf || rowsRight < minLeaf) continue;
      for (let k = 0; k < width; k++) {
        const l = withMissing ? cumulative[k] + this.missing[k] : cumulative[k];
        left[k] = l;
        right[k] = total[k] - l;
      }
      const score = this.proxy(left) + this.proxy(right);
      if (!(score > this.score)) continue;
      this.found = true;
      this.updates++;
      this.score = score;
      this.feature = feature;
      this.categorical = categorical;
      this.leftRows = rowsLeft;
      this.leftStats.set(left);
      this.missingLeft = this.missingRows === 0 ? rowsLeft >= rowsRight : withMissing;
      if (!categorical) {
        this.threshold = threshold;
        continue;
      }
      this.threshold = 0;
      const set = this.leftSet;
      set.fill(0);
      for (let j = 0; j < -threshold; j++) set[this.order[j] >>> 5] |= 1 << (this.order[j] & 31);
      if (this.missingLeft) set[MISSING_BIN >>> 5] |= 1 << (MISSING_BIN & 31);
    }
  }

  private proxy(stats: Float64Array): number {
    if (this.criterion === CRITERION_GINI) return giniProxy(stats, this.classWeight, this.width);
    if (this.criterion === CRITERION_ENTROPY) return entropyProxy(stats, this.classWeight, this.width);
    return squaredErrorProxy(stats);
  }
}

/** Stable sort of the first `count` bins of `order` by `keys[bin]` (ties keep ascending bins). */
function sortByKey(order: Uint8Array, count: number, keys: Float64Array, scratch: Uint8Array): void {
  if (count <= 24) {
    for (let i = 1; i < count; i++) {
      const bin = order[i];
      const key = keys[bin];
      let j = i - 1;
      while (j >= 0 && keys[order[j]] > key) {
        order[j + 1] = order[j];
        j--;
      }
      order[j + 1] = bin;
    }
    return;
  }
  // Bottom-up merge sort: stable, no allocation.
  let from = order;
  let to = scratch;
  for (let size = 1; size < count; size *= 2) {
    for (let lo = 0; lo < count; lo += 2 * size) {
      const mid = Math.min(lo + size, count);
      const hi = Math.min(lo + 2 * size, count);
      let i = lo;
      let j = mid;
      let k = lo;
      while (i < mid && j < hi) to[k++] = keys[from[j]] < keys[from[i]] ? from[j++] : from[i++];
      while (i < mid) to[k++] = from[i++];
      while (j < hi) to[k++] = from[j++];
    }
    const swap = from;
    from = to;
    to = swap;
  }
  if (from !== order) order.set(from.subarray(0, count));
}

/**
 * The threshold bin of a cut after the node's j-th non-empty bin: half-way across the bins
 * that are empty in this node, so rows unseen in training that fall in the gap go to the
 * nearer side (as exact CART implementations cut half-way between neighbouring values).
 * Training rows are split the same whatever bin of the gap is chosen.
 */
function cutBetween(bins: Uint8Array, j: number, values: number): number {
  return j + 1 < values ? (bins[j] + bins[j + 1] - 1) >> 1 : bins[j];
}
