import type { HistogramLayout } from "./histogram.js";

/** Limits a split must respect (METHODS.md §6). */
export interface SplitRules {
  /** λ, the L2 penalty on leaf weights. */
  readonly l2: number;
  /** Minimum rows in each child. */
  readonly minLeaf: number;
  /** Minimum Σh in each child (min_child_weight). */
  readonly minHessian: number;
  /** γ, subtracted from every gain; a split needs gain > 0. */
  readonly minGain: number;
}

/** Words of a 256-bit category set. */
export const BITSET_WORDS = 8;

/**
 * The best split found for each leaf of the tree being grown, in flat arrays indexed by leaf.
 * A numeric split sends local bins <= `threshold` left; a categorical split sends the value
 * bins in `bits` left. Missing values go left when `missingLeft` is 1.
 */
export class SplitStore {
  readonly gain: Float64Array;
  readonly feature: Int32Array;
  readonly threshold: Int32Array;
  readonly missingLeft: Uint8Array;
  readonly categorical: Uint8Array;
  readonly bits: Uint32Array;
  readonly leftGrad: Float64Array;
  readonly leftHess: Float64Array;

  constructor(capacity: number) {
    this.gain = new Float64Array(capacity).fill(-Infinity);
    this.feature = new Int32Array(capacity);
    this.threshold = new Int32Array(capacity);
    this.missingLeft = new Uint8Array(capacity);
    this.categorical = new Uint8Array(capacity);
    this.bits = new Uint32Array(capacity * BITSET_WORDS);
    this.leftGrad = new Float64Array(capacity);
    this.leftHess = new Float64Array(capacity);
  }
}

/** Scratch space for ordering one feature's categories; allocated once per fit. */
export class CategoryScratch {
  readonly order = new Int32Array(256);
  readonly key = new Float64Array(256);
}

/** Leaf weight w* = −G/(H+λ) (Chen & Guestrin 2016, eq. 5); 0 when H+λ is 0. */
export function leafWeight(gradSum: number, hessSum: number, l2: number): number {
  const denominator = hessSum + l2;
  return denominator > 0 ? -gradSum / denominator : 0;
}

/**
 * Finds the best split of one leaf from its histogram and writes it to `store[leaf]`
 * (gain −∞ when no split satisfies the rules). Gain (Chen & Guestrin 2016, eq. 7):
 *   ½[G_L²/(H_L+λ) + G_R²/(H_R+λ) − G²/(H+λ)] − γ.
 * Missing values are tried on both sides and the better side kept (sparsity-aware split
 * finding); the grower sends them to the child with more rows when the leaf has none.
 *
 * Row counts are read from the histogram only when `rules.minLeaf` > 0; a histogram built
 * without counts is searched with minLeaf 0, which loses nothing when the caller's minimum is
 * one row: an empty child has G = H = 0, so its split gains exactly 0 and is never taken.
 *
 * Categorical features use the gradient-ordered split: the leaf's categories are sorted by
 * G_c/(H_c+λ) and only prefixes of that order are scanned. For squared error this finds the
 * optimal binary partition (Fisher 1958; Breiman et al. 1984, CART §9.4) and it is the standard
 * approximation for other losses (Ke et al. 2017). Categories absent from the leaf go right.
 */
export function findBestSplit(
  hist: Float64Array,
  base: number,
  layout: HistogramLayout,
  categoricalFeature: Uint8Array,
  features: Int32Array,
  featureCount: number,
  gradSum: number,
  hessSum: number,
  rowCount: number,
  rules: SplitRules,
  store: SplitStore,
  leaf: number,
  scratch: CategoryScratch,
): void {
  const l2 = rules.l2;
  const minLeaf = rules.minLeaf;
  // With λ = 0 a child needs some hessian, or its score G²/H is undefined.
  const minHess = rules.minHessian === 0 && l2 === 0 ? Number.MIN_VALUE : rules.minHessian;
  let bestScore = -Infinity;
  let bestFeature = -1;
  let bestThreshold = 0;
  let bestMissingLeft = 0;
  let bestGradLeft = 0;
  let bestHessLeft = 0;
  let bestCategorical = 0;

  for (let j = 0; j < featureCount; j++) {
    const f = features[j];
    const from = base + layout.offset[f];
    const bins = layout.valueBins[f];
    const missing = from + 3 * bins;
    const gMissing = hist[missing];
    const hMissing = hist[missing + 1];
    const cMissing = hist[missing + 2];
    const hasMissing = cMissing > 0 || hMissing !== 0 || gMissing !== 0;
    let score = -Infinity;
    let threshold = 0;
    let missingLeft = 0;
    let gradLeft = 0;
    let hessLeft = 0;
    let gl = 0;
    let hl = 0;
    let cl = 0;

    if (categoricalFeature[f] === 0) {
      for (let t = 0; t < bins; t++) {
        const at = from + 3 * t;
        const c = hist[at + 2];
        // An empty bin gives the same partition as the threshold before it (without row counts,
        // a bin with no gradient and no hessian is as good as empty).
        if (c === 0 && hist[at + 1] === 0 && hist[at] === 0) continue;
        gl += hist[at];
        hl += hist[at + 1];
        cl += c;
        if (rowCount - cl < minLeaf) break;
        if (cl >= minLeaf) {
          const hr = hessSum - hl;
          if (hl >= minHess && hr >= minHess) {
            const gr = gradSum - gl;
            const s = (gl * gl) / (hl + l2) + (gr * gr) / (hr + l2);
            if (s > score) {
              score = s;
              threshold = t;
              missingLeft = 0;
              gradLeft = gl;
              hessLeft = hl;
            }
          }
        }
        if (hasMissing && rowCount - cl - cMissing >= minLeaf && cl + cMissing >= minLeaf) {
          const glm = gl + gMissing;
          const hlm = hl + hMissing;
          const hr = hessSum - hlm;
          if (hlm >= minHess && hr >= minHess) {
            const gr = gradSum - glm;
            const s = (glm * glm) / (hlm + l2) + (gr * gr) / (hr + l2);
            if (s > score) {
              score = s;
              threshold = t;
              missingLeft = 1;
              gradLeft = glm;
              hessLeft = hlm;
            }
          }
        }
      }
      if (score > bestScore) {
        bestScore = score;
        bestFeature = f;
        bestThreshold = threshold;
        bestMissingLeft = missingLeft;
        bestGradLeft = gradLeft;
        bestHessLeft = hessLeft;
        bestCategorical = 0;
      }
    } else {
      const order = scratch.order;
      const key = scratch.key;
      let m = 0;
      for (let b = 0; b < bins; b++) {
        const at = from + 3 * b;
        if (hist[at + 2] === 0 && hist[at + 1] === 0 && hist[at] === 0) continue;
        // Number.MIN_VALUE keeps the ratio's sign when H+λ is 0.
        const k = hist[at] / (hist[at + 1] + l2 + Number.MIN_VALUE);
        let i = m++;
        // Insertion sort (at most 254 categories), stable on ties by bin.
        while (i > 0 && key[i - 1] > k) {
          key[i] = key[i - 1];
          order[i] = order[i - 1];
          i--;
        }
        key[i] = k;
        order[i] = b;
      }
      let prefix = 0;
      for (let i = 0; i < m; i++) {
        const at = from + 3 * order[i];
        gl += hist[at];
        hl += hist[at + 1];
        cl += hist[at + 2];
        if (rowCount - cl < minLeaf) break;
        if (cl >= minLeaf) {
          const hr = hessSum - hl;
          if (hl >= minHess && hr >= minHess) {
            const gr = gradSum - gl;
            const s = (gl * gl) / (hl + l2) + (gr * gr) / (hr + l2);
            if (s > score) {
              score = s;
              prefix = i + 1;
              missingLeft = 0;
              gradLeft = gl;
              hessLeft = hl;
            }
          }
        }
        if (hasMissing && rowCount - cl - cMissing >= minLeaf && cl + cMissing >= minLeaf) {
          const glm = gl + gMissing;
          const hlm = hl + hMissing;
          const hr = hessSum - hlm;
          if (hlm >= minHess && hr >= minHess) {
            const gr = gradSum - glm;
            const s = (glm * glm) / (hlm + l2) + (gr * gr) / (hr + l2);
            if (s > score) {
              score = s;
              prefix = i + 1;
              missingLeft = 1;
              gradLeft = glm;
              hessLeft = hlm;
            }
          }
        }
      }
      if (score > bestScore) {
        bestScore = score;
        bestFeature = f;
        bestThreshold = prefix;
        bestMissingLeft = missingLeft;
        bestGradLeft = gradLeft;
        bestHessLeft = hessLeft;
        bestCategorical = 1;
        const word = leaf * BITSET_WORDS;
        store.bits.fill(0, word, word + BITSET_WORDS);
        for (let i = 0; i < prefix; i++) store.bits[word + (order[i] >>> 5)] |= 1 << (order[i] & 31);
      }
    }
  }

  const gain = bestFeature < 0 ? -Infinity : 0.5 * (bestScore - (gradSum * gradSum) / (hessSum + l2)) - rules.minGain;
  store.gain[leaf] = gain > 0 ? gain : -Infinity;
  store.feature[leaf] = bestFeature;
  store.threshold[leaf] = bestThreshold;
  store.missingLeft[leaf] = bestMissingLeft;
  store.categorical[leaf] = bestCategorical;
  store.leftGrad[leaf] = bestGradLeft;
  store.leftHess[leaf] = bestHessLeft;
}
