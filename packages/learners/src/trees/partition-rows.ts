// Splitting a node's positions into its children's. A row's bin is source[row * step + offset].

/**
 * Stable partition of positions [start, end) by `goesLeft[bin]`, moving the row index and its
 * two per-position arrays together; returns the first position of the right side. Stable, so
 * every node's rows stay in ascending row order and reading their bins walks memory forwards.
 * Each row is written to both sides and only the pointer of its side advances: no branch on
 * the side, which a split makes unpredictable.
 */
export function partitionRows(
  source: Uint8Array,
  step: number,
  offset: number,
  goesLeft: Uint8Array,
  index: Uint32Array,
  count: Float64Array,
  other: Int32Array | Float64Array,
  start: number,
  end: number,
  spareIndex: Uint32Array,
  spareCount: Float64Array,
  spareOther: Int32Array | Float64Array,
): number {
  let left = start;
  let right = 0;
  for (let i = start; i < end; i++) {
    const r = index[i];
    const c = count[i];
    const o = other[i];
    const isLeft = goesLeft[source[r * step + offset]];
    index[left] = r;
    count[left] = c;
    other[left] = o;
    spareIndex[right] = r;
    spareCount[right] = c;
    spareOther[right] = o;
    left += isLeft;
    right += 1 - isLeft;
  }
  for (let j = 0; j < right; j++) {
    index[left + j] = spareIndex[j];
    count[left + j] = spareCount[j];
    other[left + j] = spareOther[j];
  }
  return left;
}

/** partitionRows for a split whose bins by position are at hand (random cuts). */
export function partitionGathered(
  gathered: Uint8Array,
  goesLeft: Uint8Array,
  index: Uint32Array,
  count: Float64Array,
  other: Int32Array | Float64Array,
  start: number,
  end: number,
  spareIndex: Uint32Array,
  spareCount: Float64Array,
  spareOther: Int32Array | Float64Array,
): number {
  let left = start;
  let right = 0;
  for (let i = start; i < end; i++) {
    const r = index[i];
    const c = count[i];
    const o = other[i];
    const isLeft = goesLeft[gathered[i]];
    index[left] = r;
    count[left] = c;
    other[left] = o;
    spareIndex[right] = r;
    spareCount[right] = c;
    spareOther[right] = o;
    left += isLeft;
    right += 1 - isLeft;
  }
  for (let j = 0; j < right; j++) {
    index[left + j] = spareIndex[j];
    count[left + j] = spareCount[j];
    other[left + j] = spareOther[j];
  }
  return left;
}

export function partitionGatheredUnit(
  gathered: Uint8Array,
  goesLeft: Uint8Array,
  index: Uint32Array,
  other: Int32Array | Float64Array,
  start: number,
  end: number,
  spareIndex: Uint32Array,
  spareOther: Int32Array | Float64Array,
): number {
  let left = start;
  let right = 0;
  for (let i = start; i < end; i++) {
    const r = index[i];
    const o = other[i];
    const isLeft = goesLeft[gathered[i]];
    index[left] = r;
    other[left] = o;
    spareIndex[right] = r;
    spareOther[right] = o;
    left += isLeft;
    right += 1 - isLeft;
  }
  for (let j = 0; j < right; j++) {
    index[left + j] = spareIndex[j];
    other[left + j] = spareOther[j];
  }
  return left;
}
