import { MISSING_BIN } from "../binning/bin-mapper.js";

/** Bins a histogram covers: the value bins and the missing bin, one byte of bin index. */
export const HISTOGRAM_BINS = 256;
/** Words of the non-empty-bin mask of one histogram. */
export const MASK_WORDS = HISTOGRAM_BINS / 32;

/**
 * Reusable per-feature histograms of one node (Ke et al. 2017 histogram method).
 *
 * A slot holds `stride` numbers per bin: channel 0 counts distinct rows (for `min_leaf`), the
 * other channels hold the node statistics (class counts, or count and count·y). Next to each
 * slot a 256-bit mask marks the non-empty bins, so scans, subtraction and clearing visit only
 * those: deep nodes have few rows but their rows spread over many bins, and scanning all 256
 * bins there would cost far more than the rows themselves.
 *
 * A free slot is all zeros; `release` clears only the marked bins.
 */
export class HistogramPool {
  readonly stride: number;
  readonly slotSize: number;
  values: Float64Array;
  masks: Uint32Array;
  private free: Int32Array;
  private freeCount = 0;
  private capacity = 0;

  constructor(stride: number, initialSlots = 64) {
    this.stride = stride;
    this.slotSize = HISTOGRAM_BINS * stride;
    this.values = new Float64Array(0);
    this.masks = new Uint32Array(0);
    this.free = new Int32Array(0);
    this.growTo(initialSlots);
  }

  acquire(): number {
    if (this.freeCount === 0) this.growTo(this.capacity * 2);
    return this.free[--this.freeCount];
  }

  release(slot: number): void {
    const values = this.values;
    const masks = this.masks;
    const stride = this.stride;
    const base = slot * this.slotSize;
    const maskBase = slot * MASK_WORDS;
    for (let w = 0; w < MASK_WORDS; w++) {
      let bits = masks[maskBase + w];
      while (bits !== 0) {
        const low = bits & -bits;
        const bin = (w << 5) | (31 - Math.clz32(low));
        bits ^= low;
        const o = base + bin * stride;
        for (let k = 0; k < stride; k++) values[o + k] = 0;
      }
      masks[maskBase + w] = 0;
    }
    this.free[this.freeCount++] = slot;
  }

  /** Slots in use (for checks that every slot comes back). */
  inUse(): number {
    return this.capacity - this.freeCount;
  }

  /**
   * target = target − other over the bins of target's mask (other's bins are a subset: other
   * holds a child's rows, target its parent's). Bins left without rows are zeroed exactly and
   * unmarked, so float residue never makes an empty bin look occupied.
   */
  subtract(target: number, other: number): void {
    const values = this.values;
    const masks = this.masks;
    const stride = this.stride;
    const base = target * this.slotSize;
    const otherBase = other * this.slotSize;
    const maskBase = target * MASK_WORDS;
    for (let w = 0; w < MASK_WORDS; w++) {
      let bits = masks[maskBase + w];
      let kept = bits;
      while (bits !== 0) {
        const low = bits & -bits;
        const bin = (w << 5) | (31 - Math.clz32(low));
        bits ^= low;
        const o = base + bin * stride;
        const p = otherBase + bin * stride;
        const rows = values[o] - values[p];
        if (rows === 0) {
          for (let k = 0; k < stride; k++) values[o + k] = 0;
          kept ^= low;
        } else {
          values[o] = rows;
          for (let k = 1; k < stride; k++) values[o + k] -= values[p + k];
        }
      }
      masks[maskBase + w] = kept;
    }
  }

  /**
   * Writes the non-empty bins of a slot in ascending order into `out`; returns how many.
   * The missing bin, when non-empty, is therefore last.
   */
  listBins(slot: number, out: Uint8Array): number {
    const masks = this.masks;
    const maskBase = slot * MASK_WORDS;
    let count = 0;
    for (let w = 0; w < MASK_WORDS; w++) {
      let bits = masks[maskBase + w];
      while (bits !== 0) {
        const low = bits & -bits;
        out[count++] = (w << 5) | (31 - Math.clz32(low));
        bits ^= low;
      }
    }
    return count;
  }

  hasMissing(slot: number): boolean {
    return (this.masks[slot * MASK_WORDS + (MISSING_BIN >>> 5)] & (1 << (MISSING_BIN & 31))) !== 0;
  }

  private growTo(slots: number): void {
    const values = new Float64Array(slots * this.slotSize);
    values.set(this.values);
    const masks = new Uint32Array(slots * MASK_WORDS);
    masks.set(this.masks);
    const free = new Int32Array(slots);
    free.set(this.free.subarray(0, this.freeCount));
    let count = this.freeCount;
    // Hand out low slots first so a small tree touches little memory.
    for (let s = slots - 1; s >= this.capacity; s--) free[count++] = s;
    this.values = values;
    this.masks = masks;
    this.free = free;
    this.freeCount = count;
    this.capacity = slots;
  }
}
