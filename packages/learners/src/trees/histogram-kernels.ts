import { MASK_WORDS } from "./histogram-pool.js";

// Adding a node's rows to a histogram slot (channel 0 counts rows, the others hold the node
// statistics; see HistogramPool). Top-level functions with every array passed in, so each stays
// small, monomorphic and optimised on its own. A row's bin is source[row * step + offset]
// (a feature's column: step 1, offset 0; the row-major copy: step p, offset f).

export function addClassRows(hist: Float64Array, base: number, stride: number, source: Uint8Array, step: number, offset: number, index: Uint32Array, start: number, end: number, channel: Int32Array, count: Float64Array): void {
  if (step === 1) {
    for (let i = start; i < end; i++) {
      const o = base + source[index[i]] * stride;
      hist[o] += 1;
      hist[o + channel[i]] += count[i];
    }
    return;
  }
  for (let i = start; i < end; i++) {
    const o = base + source[index[i] * step + offset] * stride;
    hist[o] += 1;
    hist[o + channel[i]] += count[i];
  }
}

export function addClassRowsMarking(
  hist: Float64Array,
  base: number,
  stride: number,
  source: Uint8Array,
  step: number,
  offset: number,
  index: Uint32Array,
  start: number,
  end: number,
  channel: Int32Array,
  count: Float64Array,
  masks: Uint32Array,
  maskBase: number,
): void {
  for (let i = start; i < end; i++) {
    const bin = source[index[i] * step + offset];
    const o = base + bin * stride;
    hist[o] += 1;
    hist[o + channel[i]] += count[i];
    masks[maskBase + (bin >>> 5)] |= 1 << (bin & 31);
  }
}

export function addRegressionRows(hist: Float64Array, base: number, source: Uint8Array, step: number, offset: number, index: Uint32Array, start: number, end: number, count: Float64Array, countTimesValue: Float64Array): void {
  for (let i = start; i < end; i++) {
    const o = base + source[index[i] * step + offset] * 3;
    hist[o] += 1;
    hist[o + 1] += count[i];
    hist[o + 2] += countTimesValue[i];
  }
}

export function markRows(masks: Uint32Array, maskBase: number, source: Uint8Array, step: number, offset: number, index: Uint32Array, start: number, end: number): void {
  for (let i = start; i < end; i++) {
    const bin = source[index[i] * step + offset];
    masks[maskBase + (bin >>> 5)] |= 1 << (bin & 31);
  }
}

/** Marks the bins whose row channel is non-zero. */
export function markFromRows(hist: Float64Array, base: number, stride: number, masks: Uint32Array, maskBase: number): void {
  for (let w = 0; w < MASK_WORDS; w++) {
    let bits = 0;
    const first = base + (w << 5) * stride;
    for (let i = 0; i < 32; i++) if (hist[first + i * stride] !== 0) bits |= 1 << i;
    masks[maskBase + w] = bits;
  }
}
