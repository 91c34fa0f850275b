/**
 * Ascending sort of float64 values in place: least-significant-digit radix sort on the IEEE 754
 * bit patterns (four 16-bit digits), after mapping each pattern to an unsigned key with the
 * same order (negative: flip all bits; non-negative: set the sign bit) — the classic float
 * radix trick (Terdiman, "Radix Sort Revisited", 2000; Herf, "Radix Tricks", 2001).
 * Linear time; on a million scores it is two to three times faster than the engine's
 * comparison sort. Small inputs use the engine's sort, which wins below the cost of clearing
 * and scanning the 4 × 65,536 digit counters.
 *
 * NaN is not allowed (callers reject it); −0 sorts before +0, which compare equal anyway.
 */
const RADIX_MIN_LENGTH = 1 << 15;
const DIGIT_BITS = 16;
const DIGIT_VALUES = 1 << DIGIT_BITS;
const DIGIT_MASK = DIGIT_VALUES - 1;
const SIGN_BIT = 0x80000000;

/**
 * Sorts `values` ascending. `buffer` must hold at least `values.length` elements and is
 * overwritten; `counts` must hold 4 × 65,536 counters and is overwritten.
 */
export function sortFloat64Ascending(values: Float64Array, buffer: Float64Array, counts: Uint32Array): void {
  const n = values.length;
  if (n < RADIX_MIN_LENGTH) {
    values.sort();
    return;
  }
  // Word order inside a float64 follows the platform; every supported Node platform is little-endian.
  let source = new Uint32Array(values.buffer, values.byteOffset, 2 * n);
  let target = new Uint32Array(buffer.buffer, buffer.byteOffset, 2 * n);
  counts.fill(0, 0, 4 * DIGIT_VALUES);
  for (let i = 0; i < 2 * n; i += 2) {
    let low = source[i];
    let high = source[i + 1];
    if ((high & SIGN_BIT) !== 0) {
      low = ~low >>> 0;
      high = ~high >>> 0;
    } else {
      high = (high | SIGN_BIT) >>> 0;
    }
    source[i] = low;
    source[i + 1] = high;
    counts[low & DIGIT_MASK]++;
    counts[DIGIT_VALUES + (low >>> DIGIT_BITS)]++;
    counts[2 * DIGIT_VALUES + (high & DIGIT_MASK)]++;
    counts[3 * DIGIT_VALUES + (high >>> DIGIT_BITS)]++;
  }
  let inBuffer = false;
  for (let digit = 0; digit < 4; digit++) {
    const base = digit * DIGIT_VALUES;
    const word = digit >> 1;
    const shift = (digit & 1) * DIGIT_BITS;
    // A digit shared by every key leaves the order unchanged: skip its pass.
    if (counts[base + ((source[word] >>> shift) & DIGIT_MASK)] === n) continue;
    let offset = 0;
    for (let d = base; d < base + DIGIT_VALUES; d++) {
      const count = counts[d];
      counts[d] = offset;
      offset += count;
    }
    for (let i = 0; i < 2 * n; i += 2) {
      const low = source[i];
      const high = source[i + 1];
      const key = word === 0 ? low : high;
      const at = 2 * counts[base + ((key >>> shift) & DIGIT_MASK)]++;
      target[at] = low;
      target[at + 1] = high;
    }
    const swap = source;
    source = target;
    target = swap;
    inBuffer = !inBuffer;
  }
  for (let i = 0; i < 2 * n; i += 2) {
    const high = source[i + 1];
    if ((high & SIGN_BIT) !== 0) {
      source[i + 1] = (high & ~SIGN_BIT) >>> 0;
    } else {
      source[i] = ~source[i] >>> 0;
      source[i + 1] = ~high >>> 0;
    }
  }
  if (inBuffer) values.set(buffer.subarray(0, n));
}

/** Number of 32-bit digit counters `sortFloat64Ascending` needs. */
export const SORT_COUNTS_LENGTH = 4 * DIGIT_VALUES;
