import type { Rng } from "@nightshift/core";
import { MISSING_BIN } from "../binning/bin-mapper.js";
import { HistogramPool, MASK_WORDS } from "./histogram-pool.js";
import { CRITERION_SQUARED_ERROR, type CriterionCode } from "./impurity.js";
import { SplitFinder } from "./split-finder.js";
import { addClassRows, addClassRowsMarking, addRegressionRows, markFromRows, markRows } from "./histogram-kernels.js";
import { partitionGathered, partitionGatheredUnit, partitionRows } from "./partition-rows.js";
import {
  cutClasses,
  cutRegression,
  cutTwoClasses,
  cutTwoClassesUnit,
  cutTwoClassesUnitComplete,
  gatherRange,
  sumClassesInSet,
  sumRegressionInSet,
} from "./random-cut-kernels.js";
import { TreeBuilder, type TreeArrays } from "./tree-model.js";

/** The training rows of one fit, binned once and shared by every tree grown on them. */
export interface GrowData {
  /** bins[f][r]: bin of training row r on feature f (MISSING_BIN for missing). */
  readonly bins: readonly Uint8Array[];
  /** The same bins row-major, rowBins[r * p + f]; null when that copy would be too large. */
  readonly rowBins: Uint8Array | null;
  readonly categorical: readonly boolean[];
  /** Features with at least two value bins; the others can never split. */
  readonly usable: Int32Array;
  /** Class code per training row (classification), or null. */
  readonly classes: Int32Array | null;
  readonly classCount: number;
  /** Target per training row (regression), or null. */
  readonly values: Float64Array | null;
  /** Weight per class (all 1 without class weighting). */
  readonly classWeight: Float64Array;
}

export interface GrowSettings {
  readonly criterion: CriterionCode;
  /** Largest depth of a split node + 1 (root depth 0); Infinity for unlimited. */
  readonly maxDepth: number;
  readonly minLeaf: number;
  readonly minSplit: number;
  /** Features tried per split (non-constant ones; more are drawn when no valid split is found). */
  readonly splitFeatures: number;
  /** One random cut per feature (extra trees) instead of the best cut. */
  readonly randomCuts: boolean;
}

/**
 * Building a histogram costs about one unit per row; deriving one by subtraction about one
 * unit per non-empty bin of the parent. Below this many rows a build also marks non-empty
 * bins as it goes; above it, marking by one pass over the 256 bins is cheaper.
 */
const MARK_WHILE_BUILDING_ROWS = 512;

/**
 * Nodes with fewer rows read bins row-major: their rows lie far apart, and one cache line then
 * serves every feature tried on a row. Larger nodes read the features' columns, whose lines
 * their rows (kept in ascending order) mostly share. Measured on bench/trees.bench.ts's set.
 */
const ROW_MAJOR_ROWS = 512;

/**
 * Grows depth-first decision trees on binned rows (one grower per fit, reused for every tree of
 * a forest so buffers are allocated once).
 *
 * Rows of a node are a range of one Uint32Array of row indices, partitioned at each split
 * (stably, so a node's rows stay in ascending row order).
 *
 * Best cuts (CART, forests): a node's histograms are built for its candidate features when its
 * parent splits. The child with fewer rows is built from its rows, and its sibling's histogram
 * of a feature both need is the parent's minus it (histogram subtraction, Ke et al. 2017)
 * whenever the parent has that feature's histogram. With per-split feature sampling the
 * children mostly draw features the parent did not try, so most histograms are then built from
 * rows; a feature only one child needs is still derived by subtraction when the other child is
 * smaller than the needing one.
 *
 * Random cuts (extra trees): no histograms; see `randomCut`.
 *
 * Features found constant in a node are never tried again below it, and do not count towards
 * the features tried per split (as in Breiman's and the common implementations).
 */
export class TreeGrower {
  private readonly data: GrowData;
  private readonly settings: GrowSettings;
  private readonly featureCount: number;
  /** Statistics per side: C class counts, or [Σ count, Σ count·y]. */
  private readonly width: number;
  private readonly stride: number;
  private readonly regression: boolean;
  private readonly pool: HistogramPool;
  private readonly finder: SplitFinder;
  private readonly builder: TreeBuilder;

  // Per-tree row state, by position in `index` (partitioning moves all four together, so a
  // node's counts and classes are read in order and only its bins are gathered by row).
  private readonly index: Uint32Array;
  /** Histogram channel of the row's class (1 + class), classification only. */
  private readonly channel: Int32Array;
  /** Bootstrap multiplicity (or 1) of the row. */
  private readonly count: Float64Array;
  /** Room for the right side while partitioning. */
  private readonly spareIndex: Uint32Array;
  private readonly spareCount: Float64Array;
  private readonly spareChannel: Int32Array;
  private readonly spareValues: Float64Array;
  /** A random cut's bins by position, and those of the best cut so far (swapped, not copied). */
  private gathered: Uint8Array;
  private bestGathered: Uint8Array;
  /** Whether bestGathered holds the bins of the node's best split so far. */
  private bestIsGathered = false;
  /** Set by `locate`. */
  private step = 1;
  private offset = 0;
  /** Whether every count is 1 (no bootstrap): kernels then skip the counts. */
  private unitCounts = false;
  /** count·y of the row, regression only. */
  private readonly countTimesValue: Float64Array;
  /** The present bins of one feature in a node (random cuts). */
  private readonly presentBins = new Uint32Array(MASK_WORDS);
  private readonly binList = new Uint8Array(256);
  private readonly leftSetScratch = new Uint32Array(MASK_WORDS);
  private readonly randomSide = new Uint8Array(256);
  /** [rows left, rows missing] of a random cut. */
  private readonly tally = new Float64Array(2);
  /** Per-side sums of a random cut with more than two classes: left, right, missing. */
  private readonly sideSums: Float64Array;
  /** Split side per bin (1 = left) of the split being applied. */
  private readonly goesLeft = new Uint8Array(256);

  // Stack of nodes to split, structure of arrays; per entry a feature order (constants first,
  // then drawn features, then undrawn), and a histogram slot per feature (−1 when absent).
  private stackSize = 0;
  private capacity = 0;
  private stackNode = new Int32Array(0);
  private stackStart = new Int32Array(0);
  private stackEnd = new Int32Array(0);
  private stackDepth = new Int32Array(0);
  private stackConstants = new Int32Array(0);
  private stackDrawn = new Int32Array(0);
  private stackOrder = new Int32Array(0);
  private stackSlots = new Int32Array(0);
  private stackStats = new Float64Array(0);

  // The node being split.
  private readonly order: Int32Array;
  private readonly slots: Int32Array;
  private readonly stats: Float64Array;
  private readonly constantNow: Uint8Array;
  private readonly need: Uint8Array;
  private readonly rightStats: Float64Array;
  private readonly childOrder: Int32Array;
  private readonly leftSlots: Int32Array;
  private readonly rightSlots: Int32Array;

  constructor(data: GrowData, settings: GrowSettings, rowCount: number) {
    this.data = data;
    this.settings = settings;
    this.featureCount = data.bins.length;
    this.regression = settings.criterion === CRITERION_SQUARED_ERROR;
    this.width = this.regression ? 2 : data.classCount;
    this.stride = this.width + 1;
    this.pool = new HistogramPool(this.stride);
    this.sideSums = new Float64Array(3 * this.stride);
    this.finder = new SplitFinder(this.pool, this.width, data.classWeight, settings.criterion, settings.minLeaf);
    this.builder = new TreeBuilder(this.regression ? 1 : data.classCount);
    this.index = new Uint32Array(rowCount);
    this.channel = new Int32Array(this.regression ? 0 : rowCount);
    this.count = new Float64Array(rowCount);
    this.countTimesValue = new Float64Array(this.regression ? rowCount : 0);
    this.spareIndex = new Uint32Array(rowCount);
    this.spareCount = new Float64Array(rowCount);
    this.spareChannel = new Int32Array(this.regression ? 0 : rowCount);
    this.spareValues = new Float64Array(this.regression ? rowCount : 0);
    this.gathered = new Uint8Array(settings.randomCuts ? rowCount : 0);
    this.bestGathered = new Uint8Array(settings.randomCuts ? rowCount : 0);
    const p = this.featureCount;
    this.order = new Int32Array(p);
    this.slots = new Int32Array(p);
    this.stats = new Float64Array(this.width);
    this.constantNow = new Uint8Array(p);
    this.need = new Uint8Array(p);
    this.rightStats = new Float64Array(this.width);
    this.childOrder = new Int32Array(p);
    this.leftSlots = new Int32Array(p);
    this.rightSlots = new Int32Array(p);
    this.growStack(16);
  }

  /**
   * Grows one tree on the rows with a positive `counts[r]` (bootstrap multiplicities, or 1),
   * drawing features and cuts from `rng`.
   */
  grow(counts: Float64Array, rng: Rng): TreeArrays {
    const n = counts.length;
    let size = 0;
    this.unitCounts = true;
    for (let r = 0; r < n; r++) {
      if (counts[r] !== 0 && counts[r] !== 1) this.unitCounts = false;
      if (counts[r] > 0) {
        this.index[size] = r;
        this.count[size] = counts[r];
        size++;
      }
    }
    if (this.regression) {
      const values = this.data.values as Float64Array;
      for (let i = 0; i < size; i++) this.countTimesValue[i] = this.count[i] * values[this.index[i]];
    } else {
      const classes = this.data.classes as Int32Array;
      for (let i = 0; i < size; i++) this.channel[i] = 1 + classes[this.index[i]];
    }
    const builder = this.builder;
    builder.reset();
    const root = builder.addNode();
    const total = this.stats;
    this.sumRows(0, size, total);
    if (this.isTerminal(0, size, 0, total)) {
      this.writeLeaf(root, total);
      return builder.finish();
    }
    this.stackSize = 0;
    const usable = this.data.usable;
    this.order.set(usable);
    this.pushNode(root, 0, size, 0, total, this.order, usable.length, 0, rng);
    while (this.stackSize > 0) this.splitNode(rng);
    return builder.finish();
  }

  private splitNode(rng: Rng): void {
    const top = --this.stackSize;
    const p = this.featureCount;
    const node = this.stackNode[top];
    const start = this.stackStart[top];
    const end = this.stackEnd[top];
    const depth = this.stackDepth[top];
    let constants = this.stackConstants[top];
    const firstCandidate = constants;
    let drawn = this.stackDrawn[top];
    const order = this.order;
    const slots = this.slots;
    const randomCuts = this.settings.randomCuts;
    const poppedOrder = this.stackOrder;
    for (let f = 0, at = top * p; f < p; f++) order[f] = poppedOrder[at + f];
    if (!randomCuts) for (let f = 0, at = top * p; f < p; f++) slots[f] = this.stackSlots[at + f];
    const stats = this.stats;
    for (let k = 0; k < this.width; k++) stats[k] = this.stackStats[top * this.width + k];
    const usableCount = this.data.usable.length;

    const finder = this.finder;
    const rows = end - start;
    finder.beginNode(stats, rows);
    this.bestIsGathered = false;
    const constantNow = this.constantNow;
    const categorical = this.data.categorical;
    const random = this.settings.splitFeatures < usableCount;
    let tried = 0;
    for (let position = constants; position < usableCount; position++) {
      if (position === constants + drawn) {
        if (random) drawFeature(order, 0, position, usableCount, rng);
        drawn++;
      }
      const feature = order[position];
      let splittable: boolean;
      if (randomCuts) splittable = this.randomCut(feature, categorical[feature], start, end, rng);
      else {
        let slot = slots[feature];
        if (slot < 0) {
          slot = this.pool.acquire();
          this.buildHistogram(feature, slot, start, end);
          slots[feature] = slot;
        }
        splittable = finder.bestCut(feature, slot, categorical[feature]);
      }
      if (!splittable) {
        constantNow[feature] = 1;
        continue;
      }
      tried++;
      if (tried >= this.settings.splitFeatures && finder.found) break;
      // No candidate can strictly beat a split into two pure children, so the rest are skipped:
      // the tree is the same as with every candidate scored (the first best is kept either way).
      if (!this.regression && finder.found && finder.splitsPurely()) break;
    }

    // Features found constant here move to the front: children skip them.
    const childOrder = this.childOrder;
    let childConstants = 0;
    for (let i = 0; i < constants; i++) childOrder[childConstants++] = order[i];
    for (let i = constants; i < usableCount; i++) if (constantNow[order[i]] === 1) childOrder[childConstants++] = order[i];
    let position = childConstants;
    for (let i = constants; i < usableCount; i++) {
      if (constantNow[order[i]] === 1) constantNow[order[i]] = 0;
      else childOrder[position++] = order[i];
    }
    constants = childConstants;

    // Only the features tried here (order positions from firstCandidate on) hold histograms.
    const triedEnd = firstCandidate + drawn;
    if (!finder.found) {
      this.writeLeaf(node, stats);
      if (!randomCuts) this.releaseSlots(slots, order, firstCandidate, triedEnd);
      return;
    }
    const mid = this.partition(start, end);
    const leftRows = mid - start;
    const builder = this.builder;
    const leftNode = builder.addNode();
    const rightNode = builder.addNode();
    if (finder.categorical) builder.setCategoricalSplit(node, finder.feature, finder.leftSet, 0, leftNode, rightNode);
    else builder.setNumericSplit(node, finder.feature, finder.threshold, finder.missingLeft, leftNode, rightNode);

    const leftStats = finder.leftStats;
    const rightStats = this.rightStats;
    for (let k = 0; k < this.width; k++) rightStats[k] = stats[k] - leftStats[k];
    const leftOpen = !this.isTerminal(start, mid, depth + 1, leftStats);
    const rightOpen = !this.isTerminal(mid, end, depth + 1, rightStats);
    if (!leftOpen) this.writeLeaf(leftNode, leftStats);
    if (!rightOpen) this.writeLeaf(rightNode, rightStats);

    const leftSlots = this.leftSlots;
    const rightSlots = this.rightSlots;
    if (!randomCuts) {
      leftSlots.fill(-1);
      rightSlots.fill(-1);
    }
    if (leftOpen || rightOpen) {
      // The smaller child is split first (pushed last): its subtree holds fewer histograms while
      // the other waits. The child pushed first keeps its order at the stack's top entry.
      const leftFirst = leftRows <= end - mid;
      const need = this.need;
      const first = Math.min(this.settings.splitFeatures, usableCount - constants);
      const base = this.reserveOrders();
      const bothOpen = leftOpen && rightOpen;
      const leftAt = base + (bothOpen && leftFirst ? p : 0);
      const rightAt = base + (bothOpen && !leftFirst ? p : 0);
      if (leftOpen) this.drawInto(leftAt, constants, first, usableCount, random, rng);
      if (rightOpen) this.drawInto(rightAt, constants, first, usableCount, random, rng);
      if (!randomCuts) {
        // reserveOrders may have grown the stack: read its current arrays.
        const orders = this.stackOrder;
        for (let i = constants; i < constants + first; i++) {
          if (leftOpen) need[orders[leftAt + i]] |= 1;
          if (rightOpen) need[orders[rightAt + i]] |= 2;
        }
        this.childHistograms(start, mid, end, leftRows, leftOpen ? leftAt : -1, rightOpen ? rightAt : -1, constants, first);
        for (let i = constants; i < constants + first; i++) {
          if (leftOpen) need[orders[leftAt + i]] = 0;
          if (rightOpen) need[orders[rightAt + i]] = 0;
        }
        this.releaseSlots(slots, order, firstCandidate, triedEnd);
      }
      if (rightOpen && leftFirst) this.pushPrepared(rightNode, mid, end, depth + 1, rightStats, constants, first, rightSlots);
      if (leftOpen) this.pushPrepared(leftNode, start, mid, depth + 1, leftStats, constants, first, leftSlots);
      if (rightOpen && !leftFirst) this.pushPrepared(rightNode, mid, end, depth + 1, rightStats, constants, first, rightSlots);
    } else if (!randomCuts) {
      this.releaseSlots(slots, order, firstCandidate, triedEnd);
    }
  }

  /**
   * Histograms of the children's first features. `need[f]` bit 1 = left wants f, bit 2 = right.
   * The child with fewer rows is built from rows; the other is parent − smaller when the parent
   * holds f and that is cheaper than building it.
   */
  private childHistograms(start: number, mid: number, end: number, leftRows: number, leftAt: number, rightAt: number, constants: number, first: number): void {
    const need = this.need;
    const slots = this.slots;
    const pool = this.pool;
    const leftSmaller = leftRows <= end - mid;
    const smallRows = leftSmaller ? leftRows : end - mid;
    const largeRows = leftSmaller ? end - mid : leftRows;
    const smallBit = leftSmaller ? 1 : 2;
    const largeBit = leftSmaller ? 2 : 1;
    const smallSlots = leftSmaller ? this.leftSlots : this.rightSlots;
    const largeSlots = leftSmaller ? this.rightSlots : this.leftSlots;
    const smallStart = leftSmaller ? start : mid;
    const smallEnd = leftSmaller ? mid : end;
    const largeStart = leftSmaller ? mid : start;
    const largeEnd = leftSmaller ? end : mid;
    const stackOrder = this.stackOrder;
    for (let side = 0; side < 2; side++) {
      const at = side === 0 ? leftAt : rightAt;
      if (at < 0) continue;
      for (let i = constants; i < constants + first; i++) {
        const feature = stackOrder[at + i];
        const wanted = need[feature];
        if (wanted === 0 || smallSlots[feature] >= 0 || largeSlots[feature] >= 0) continue;
        const parentSlot = slots[feature];
        const wantSmall = (wanted & smallBit) !== 0;
        const wantLarge = (wanted & largeBit) !== 0;
        if (parentSlot >= 0 && wantLarge && (wantSmall || smallRows + this.nonEmptyBins(parentSlot) < largeRows)) {
          const small = pool.acquire();
          this.buildHistogram(feature, small, smallStart, smallEnd);
          pool.subtract(parentSlot, small);
          largeSlots[feature] = parentSlot;
          slots[feature] = -1;
          if (wantSmall) smallSlots[feature] = small;
          else pool.release(small);
          continue;
        }
        if (wantSmall) {
          const slot = pool.acquire();
          this.buildHistogram(feature, slot, smallStart, smallEnd);
          smallSlots[feature] = slot;
        }
        if (wantLarge) {
          const slot = pool.acquire();
          this.buildHistogram(feature, slot, largeStart, largeEnd);
          largeSlots[feature] = slot;
        }
      }
    }
  }

  private nonEmptyBins(slot: number): number {
    const masks = this.pool.masks;
    let count = 0;
    for (let w = 0; w < MASK_WORDS; w++) {
      let bits = masks[slot * MASK_WORDS + w];
      bits -= (bits >>> 1) & 0x55555555;
      bits = (bits & 0x33333333) + ((bits >>> 2) & 0x33333333);
      count += (((bits + (bits >>> 4)) & 0x0f0f0f0f) * 0x01010101) >>> 24;
    }
    return count;
  }

  /**
   * One random cut of one feature, scored by the finder (extremely randomized trees, Geurts,
   * Ernst & Wehenkel 2006, Algorithm 2); false when the feature is constant in the node.
   * The paper draws the cut uniformly between the node's minimum and maximum value; on bins we
   * draw a bin boundary uniformly between the node's lowest and highest present bin. Bins are
   * training quantiles, so this is a uniform draw on the feature's rank scale rather than its
   * value scale: a long tail of extreme values does not pull most cuts into the tail.
   * Categorical: a uniformly drawn non-empty proper subset of the node's categories goes left
   * (the paper's rule for nominal attributes). Two passes over the node's rows (range, then
   * left sums) cost less than a histogram here, since only one cut is scored.
   */
  private randomCut(feature: number, categorical: boolean, start: number, end: number, rng: Rng): boolean {
    const source = this.locate(feature, end - start);
    const step = this.step;
    const offset = this.offset;
    const finder = this.finder;
    const left = finder.cumulative;
    const missing = finder.missing;
    const tally = this.tally;
    if (!categorical) {
      const gathered = this.gathered;
      const range = gatherRange(source, step, offset, this.index, start, end, gathered);
      const lowest = range & 0xff;
      const highest = (range >>> 8) & 0xff;
      const hasMissing = range >>> 16 === 1;
      if (lowest > highest || (lowest === highest && !hasMissing)) return false;
      const threshold = lowest < highest ? lowest + rng.int(highest - lowest) : lowest;
      if (this.regression) cutRegression(gathered, start, end, this.count, this.countTimesValue, threshold, left, missing, tally);
      else if (this.width === 2 && this.unitCounts && !hasMissing) cutTwoClassesUnitComplete(gathered, start, end, this.channel, threshold, left, missing, tally);
      else if (this.width === 2 && this.unitCounts) cutTwoClassesUnit(gathered, start, end, this.channel, threshold, left, missing, tally);
      else if (this.width === 2) cutTwoClasses(gathered, start, end, this.channel, this.count, threshold, left, missing, tally);
      else cutClasses(gathered, start, end, this.channel, this.count, threshold, this.sideSums, this.stride, left, missing, tally);
      finder.missingRows = tally[1];
      const updates = finder.updates;
      finder.considerCut(feature, threshold, tally[0], false);
      if (finder.updates !== updates) {
        // The best cut's bins are kept for the partition.
        this.gathered = this.bestGathered;
        this.bestGathered = gathered;
        this.bestIsGathered = true;
      }
      return true;
    }
    const present = this.presentBins;
    present.fill(0);
    markRows(present, 0, source, step, offset, this.index, start, end);
    const hasMissing = (present[MISSING_BIN >>> 5] & (1 << (MISSING_BIN & 31))) !== 0;
    present[MISSING_BIN >>> 5] &= ~(1 << (MISSING_BIN & 31));
    const bins = this.binList;
    let values = 0;
    for (let w = 0; w < MASK_WORDS; w++) {
      let word = present[w];
      while (word !== 0) {
        const low = word & -word;
        bins[values++] = (w << 5) | (31 - Math.clz32(low));
        word ^= low;
      }
    }
    if (values === 0 || (values === 1 && !hasMissing)) return false;
    left.fill(0);
    missing.fill(0);
    const side = this.randomSide;
    if (values === 1) side[0] = 1;
    else {
      // Rejection keeps the draw uniform over the non-trivial subsets; < 2 tries on average.
      for (;;) {
        let leftCount = 0;
        for (let j = 0; j < values; j++) {
          side[j] = rng.next() < 0.5 ? 1 : 0;
          leftCount += side[j];
        }
        if (leftCount > 0 && leftCount < values) break;
      }
    }
    const set = this.leftSetScratch;
    set.fill(0);
    let size = 0;
    for (let j = 0; j < values; j++) {
      if (side[j] === 0) continue;
      set[bins[j] >>> 5] |= 1 << (bins[j] & 31);
      finder.order[size++] = bins[j];
    }
    if (this.regression) sumRegressionInSet(source, step, offset, this.index, start, end, this.count, this.countTimesValue, set, left, missing, tally);
    else sumClassesInSet(source, step, offset, this.index, start, end, this.channel, this.count, set, left, missing, tally);
    finder.missingRows = tally[1];
    const updates = finder.updates;
    finder.considerCut(feature, -size, tally[0], true);
    if (finder.updates !== updates) this.bestIsGathered = false;
    return true;
  }

  /**
   * Where to read a feature's bins for a node of `rows` rows: bin of row r at
   * source[r * step + offset]. Small nodes read the row-major copy: their rows are scattered,
   * and one cache line then serves every feature tried on a row instead of one.
   */
  private locate(feature: number, rows: number): Uint8Array {
    const rowBins = this.data.rowBins;
    if (rows < ROW_MAJOR_ROWS && rowBins !== null) {
      this.step = this.featureCount;
      this.offset = feature;
      return rowBins;
    }
    this.step = 1;
    this.offset = 0;
    return this.data.bins[feature];
  }

  /** Adds the histogram of `feature` over rows index[start, end) to an empty slot. */
  private buildHistogram(feature: number, slot: number, start: number, end: number): void {
    const pool = this.pool;
    const base = slot * pool.slotSize;
    const maskBase = slot * MASK_WORDS;
    const source = this.locate(feature, end - start);
    const step = this.step;
    const offset = this.offset;
    const mark = end - start < MARK_WHILE_BUILDING_ROWS;
    if (this.regression) {
      addRegressionRows(pool.values, base, source, step, offset, this.index, start, end, this.count, this.countTimesValue);
      if (mark) markRows(pool.masks, maskBase, source, step, offset, this.index, start, end);
      else markFromRows(pool.values, base, this.stride, pool.masks, maskBase);
    } else if (mark) {
      addClassRowsMarking(pool.values, base, this.stride, source, step, offset, this.index, start, end, this.channel, this.count, pool.masks, maskBase);
    } else {
      addClassRows(pool.values, base, this.stride, source, step, offset, this.index, start, end, this.channel, this.count);
      markFromRows(pool.values, base, this.stride, pool.masks, maskBase);
    }
  }

  /** Moves the rows going left to the front of positions [start, end); returns the first right position. */
  private partition(start: number, end: number): number {
    const finder = this.finder;
    const goesLeft = this.goesLeft;
    if (finder.categorical) {
      const set = finder.leftSet;
      for (let bin = 0; bin < 256; bin++) goesLeft[bin] = (set[bin >>> 5] >>> (bin & 31)) & 1;
    } else {
      // Bins above the node's highest present bin never occur here; fill up to it only.
      goesLeft.fill(1, 0, finder.threshold + 1);
      goesLeft.fill(0, finder.threshold + 1, MISSING_BIN);
      goesLeft[MISSING_BIN] = finder.missingLeft ? 1 : 0;
    }
    const other = this.regression ? this.countTimesValue : this.channel;
    const spareOther = this.regression ? this.spareValues : this.spareChannel;
    if (this.bestIsGathered && this.unitCounts) {
      // Every count is 1 in every position: counts need not move.
      return partitionGatheredUnit(this.bestGathered, goesLeft, this.index, other, start, end, this.spareIndex, spareOther);
    }
    if (this.bestIsGathered) {
      return partitionGathered(this.bestGathered, goesLeft, this.index, this.count, other, start, end, this.spareIndex, this.spareCount, spareOther);
    }
    const source = this.locate(finder.feature, end - start);
    return partitionRows(source, this.step, this.offset, goesLeft, this.index, this.count, other, start, end, this.spareIndex, this.spareCount, spareOther);
  }

  private isTerminal(start: number, end: number, depth: number, stats: Float64Array): boolean {
    const rows = end - start;
    const settings = this.settings;
    if (depth >= settings.maxDepth || rows < settings.minSplit || rows < 2 * settings.minLeaf) return true;
    if (!this.regression) {
      let present = 0;
      for (let k = 0; k < this.width; k++) if (stats[k] > 0) present++;
      return present <= 1;
    }
    const values = this.data.values as Float64Array;
    const index = this.index;
    const first = values[index[start]];
    for (let i = start + 1; i < end; i++) if (values[index[i]] !== first) return false;
    return true;
  }

  private sumRows(start: number, end: number, out: Float64Array): void {
    out.fill(0);
    const count = this.count;
    if (this.regression) {
      const weighted = this.countTimesValue;
      for (let i = start; i < end; i++) {
        out[0] += count[i];
        out[1] += weighted[i];
      }
    } else {
      const channel = this.channel;
      for (let i = start; i < end; i++) out[channel[i] - 1] += count[i];
    }
  }

  /** Leaf value: class shares weighted by class weight (class probabilities), or the mean target. */
  private writeLeaf(node: number, stats: Float64Array): void {
    const builder = this.builder;
    const offset = builder.setLeaf(node);
    const values = builder.leafValues;
    if (this.regression) {
      values[offset] = stats[1] / stats[0];
      return;
    }
    const weight = this.data.classWeight;
    let total = 0;
    for (let k = 0; k < this.width; k++) total += weight[k] * stats[k];
    for (let k = 0; k < this.width; k++) values[offset + k] = (weight[k] * stats[k]) / total;
  }

  private releaseSlots(slots: Int32Array, order: Int32Array, from: number, to: number): void {
    for (let i = from; i < to; i++) {
      const feature = order[i];
      if (slots[feature] >= 0) {
        this.pool.release(slots[feature]);
        slots[feature] = -1;
      }
    }
  }

  /** Makes room for two child entries on the stack; returns where the first child's order goes. */
  private reserveOrders(): number {
    if (this.stackSize + 2 > this.capacity) this.growStack(this.capacity * 2);
    const p = this.featureCount;
    const at = this.stackSize * p;
    this.stackOrder.set(this.childOrder, at);
    this.stackOrder.set(this.childOrder, at + p);
    return at;
  }

  /** Draws the first `first` features after the constants of the order stored at `at`. */
  private drawInto(at: number, constants: number, first: number, usableCount: number, random: boolean, rng: Rng): void {
    if (!random) return;
    for (let i = constants; i < constants + first; i++) drawFeature(this.stackOrder, at, i, usableCount, rng);
  }

  /** Root entry (its order is given; no histograms yet). */
  private pushNode(node: number, start: number, end: number, depth: number, stats: Float64Array, order: Int32Array, usableCount: number, constants: number, rng: Rng): void {
    if (this.stackSize + 2 > this.capacity) this.growStack(this.capacity * 2);
    const p = this.featureCount;
    const at = this.stackSize * p;
    this.stackOrder.set(order, at);
    const random = this.settings.splitFeatures < usableCount;
    const first = Math.min(this.settings.splitFeatures, usableCount - constants);
    this.drawInto(at, constants, first, usableCount, random, rng);
    this.slots.fill(-1);
    this.pushPrepared(node, start, end, depth, stats, constants, first, this.slots);
  }

  /** Pushes an entry whose feature order already sits in the stack at its own place (top · p). */
  private pushPrepared(node: number, start: number, end: number, depth: number, stats: Float64Array, constants: number, drawn: number, slots: Int32Array): void {
    const p = this.featureCount;
    const top = this.stackSize++;
    this.stackNode[top] = node;
    this.stackStart[top] = start;
    this.stackEnd[top] = end;
    this.stackDepth[top] = depth;
    this.stackConstants[top] = constants;
    this.stackDrawn[top] = drawn;
    if (!this.settings.randomCuts) this.stackSlots.set(slots, top * p);
    for (let k = 0; k < this.width; k++) this.stackStats[top * this.width + k] = stats[k];
  }

  private growStack(capacity: number): void {
    const p = this.featureCount;
    const copy = <T extends Int32Array | Float64Array>(from: T, to: T): T => {
      to.set(from);
      return to;
    };
    this.stackNode = copy(this.stackNode, new Int32Array(capacity));
    this.stackStart = copy(this.stackStart, new Int32Array(capacity));
    this.stackEnd = copy(this.stackEnd, new Int32Array(capacity));
    this.stackDepth = copy(this.stackDepth, new Int32Array(capacity));
    this.stackConstants = copy(this.stackConstants, new Int32Array(capacity));
    this.stackDrawn = copy(this.stackDrawn, new Int32Array(capacity));
    this.stackOrder = copy(this.stackOrder, new Int32Array(capacity * p));
    this.stackSlots = copy(this.stackSlots, new Int32Array(capacity * p));
    this.stackStats = copy(this.stackStats, new Float64Array(capacity * this.width));
    this.capacity = capacity;
  }

  /** Histogram slots still held (0 after every tree). */
  slotsInUse(): number {
    return this.pool.inUse();
  }
}

/**
 * Partial Fisher–Yates step on the order stored from `at`: a uniformly drawn feature among
 * positions [position, size) moves to `position`.
 */
function drawFeature(order: Int32Array, at: number, position: number, size: number, rng: Rng): void {
  const pick = at + position + rng.int(size - position);
  const feature = order[pick];
  order[pick] = order[at + position];
  order[at + position] = feature;
}
