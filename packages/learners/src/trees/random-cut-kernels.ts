import { MISSING_BIN } from "../binning/bin-mapper.js";

// The passes over a node's rows that score one random cut of one feature (extra trees).
// A row's bin is source[row * step + offset].

/**
 * Copies a feature's bins of positions [start, end) into `gathered` (same positions), so the
 * next passes read them in order, and returns the lowest and highest present value bin and
 * whether a missing value occurs: lowest | highest << 8 | missing << 16 (lowest > highest when
 * all are missing).
 */
export function gatherRange(source: Uint8Array, step: number, offset: number, index: Uint32Array, start: number, end: number, gathered: Uint8Array): number {
  let lowest = MISSING_BIN;
  let highest = 0;
  if (step === 1) {
    for (let i = start; i < end; i++) {
      const bin = source[index[i]];
      gathered[i] = bin;
      lowest = Math.min(lowest, bin);
      highest = Math.max(highest, bin);
    }
  } else {
    for (let i = start; i < end; i++) {
      const bin = source[index[i] * step + offset];
      gathered[i] = bin;
      lowest = Math.min(lowest, bin);
      highest = Math.max(highest, bin);
    }
  }
  if (highest !== MISSING_BIN) return lowest | (highest << 8);
  // Missing values present: the highest present value bin needs one more (in-order) pass.
  highest = 0;
  for (let i = start; i < end; i++) {
    const bin = gathered[i];
    if (bin !== MISSING_BIN && bin > highest) highest = bin;
  }
  return lowest | (highest << 8) | (1 << 16);
}

// Sums of one random cut: `left` gets the statistics of bins <= threshold, `missing` those of
// the missing bin, tally = [rows left, rows missing]. Sides are chosen by arithmetic, not
// branches: a random cut sends rows left and right unpredictably.

export function cutTwoClasses(
  gathered: Uint8Array,
  start: number,
  end: number,
  channel: Int32Array,
  count: Float64Array,
  threshold: number,
  left: Float64Array,
  missing: Float64Array,
  tally: Float64Array,
): void {
  let leftRows = 0;
  let leftCount = 0;
  let leftSecond = 0;
  let missingRows = 0;
  let missingCount = 0;
  let missingSecond = 0;
  for (let i = start; i < end; i++) {
    const bin = gathered[i];
    const isLeft = (bin - threshold - 1) >>> 31;
    const isMissing = (bin + 1) >>> 8;
    const c = count[i];
    const second = c * (channel[i] - 1);
    leftRows += isLeft;
    leftCount += isLeft * c;
    leftSecond += isLeft * second;
    missingRows += isMissing;
    missingCount += isMissing * c;
    missingSecond += isMissing * second;
  }
  left[0] = leftCount - leftSecond;
  left[1] = leftSecond;
  missing[0] = missingCount - missingSecond;
  missing[1] = missingSecond;
  tally[0] = leftRows;
  tally[1] = missingRows;
}

export function cutTwoClassesUnit(
  gathered: Uint8Array,
  start: number,
  end: number,
  channel: Int32Array,
  threshold: number,
  left: Float64Array,
  missing: Float64Array,
  tally: Float64Array,
): void {
  let leftRows = 0;
  let leftSecond = 0;
  let missingRows = 0;
  let missingSecond = 0;
  for (let i = start; i < end; i++) {
    const bin = gathered[i];
    const isLeft = (bin - threshold - 1) >>> 31;
    const isMissing = (bin + 1) >>> 8;
    const second = channel[i] - 1;
    leftRows += isLeft;
    leftSecond += isLeft & second;
    missingRows += isMissing;
    missingSecond += isMissing & second;
  }
  left[0] = leftRows - leftSecond;
  left[1] = leftSecond;
  missing[0] = missingRows - missingSecond;
  missing[1] = missingSecond;
  tally[0] = leftRows;
  tally[1] = missingRows;
}

/** cutTwoClassesUnit for a node without missing values on the feature. */
export function cutTwoClassesUnitComplete(
  gathered: Uint8Array,
  start: number,
  end: number,
  channel: Int32Array,
  threshold: number,
  left: Float64Array,
  missing: Float64Array,
  tally: Float64Array,
): void {
  let leftRows = 0;
  let leftSecond = 0;
  const limit = threshold + 1;
  for (let i = start; i < end; i++) {
    const isLeft = (gathered[i] - limit) >>> 31;
    leftRows += isLeft;
    leftSecond += isLeft & (channel[i] - 1);
  }
  left[0] = leftRows - leftSecond;
  left[1] = leftSecond;
  missing[0] = 0;
  missing[1] = 0;
  tally[0] = leftRows;
  tally[1] = 0;
}

export function cutRegression(
  gathered: Uint8Array,
  start: number,
  end: number,
  count: Float64Array,
  countTimesValue: Float64Array,
  threshold: number,
  left: Float64Array,
  missing: Float64Array,
  tally: Float64Array,
): void {
  let leftRows = 0;
  let leftCount = 0;
  let leftSum = 0;
  let missingRows = 0;
  let missingCount = 0;
  let missingSum = 0;
  for (let i = start; i < end; i++) {
    const bin = gathered[i];
    const isLeft = (bin - threshold - 1) >>> 31;
    const isMissing = (bin + 1) >>> 8;
    const c = count[i];
    const cy = countTimesValue[i];
    leftRows += isLeft;
    leftCount += isLeft * c;
    leftSum += isLeft * cy;
    missingRows += isMissing;
    missingCount += isMissing * c;
    missingSum += isMissing * cy;
  }
  left[0] = leftCount;
  left[1] = leftSum;
  missing[0] = missingCount;
  missing[1] = missingSum;
  tally[0] = leftRows;
  tally[1] = missingRows;
}

export function cutClasses(
  gathered: Uint8Array,
  start: number,
  end: number,
  channel: Int32Array,
  count: Float64Array,
  threshold: number,
  sums: Float64Array,
  stride: number,
  left: Float64Array,
  missing: Float64Array,
  tally: Float64Array,
): void {
  sums.fill(0);
  for (let i = start; i < end; i++) {
    const bin = gathered[i];
    // 0 left, 1 right, 2 missing
    const side = (1 - ((bin - threshold - 1) >>> 31)) + ((bin + 1) >>> 8);
    const o = side * stride;
    sums[o] += 1;
    sums[o + channel[i]] += count[i];
  }
  for (let k = 0; k < left.length; k++) {
    left[k] = sums[1 + k];
    missing[k] = sums[2 * stride + 1 + k];
  }
  tally[0] = sums[0];
  tally[1] = sums[2 * stride];
}

export function sumClassesInSet(
  source: Uint8Array,
  step: number,
  offset: number,
  index: Uint32Array,
  start: number,
  end: number,
  channel: Int32Array,
  count: Float64Array,
  set: Uint32Array,
  left: Float64Array,
  missing: Float64Array,
  tally: Float64Array,
): void {
  let leftRows = 0;
  let missingRows = 0;
  for (let i = start; i < end; i++) {
    const bin = source[index[i] * step + offset];
    if (bin === MISSING_BIN) {
      missingRows++;
      missing[channel[i] - 1] += count[i];
    } else if (((set[bin >>> 5] >>> (bin & 31)) & 1) !== 0) {
      leftRows++;
      left[channel[i] - 1] += count[i];
    }
  }
  tally[0] = leftRows;
  tally[1] = missingRows;
}

export function sumRegressionInSet(
  source: Uint8Array,
  step: number,
  offset: number,
  index: Uint32Array,
  start: number,
  end: number,
  count: Float64Array,
  countTimesValue: Float64Array,
  set: Uint32Array,
  left: Float64Array,
  missing: Float64Array,
  tally: Float64Array,
): void {
  let leftRows = 0;
  let missingRows = 0;
  for (let i = start; i < end; i++) {
    const bin = source[index[i] * step + offset];
    if (bin === MISSING_BIN) {
      missingRows++;
      missing[0] += count[i];
      missing[1] += countTimesValue[i];
    } else if (((set[bin >>> 5] >>> (bin & 31)) & 1) !== 0) {
      leftRows++;
      left[0] += count[i];
      left[1] += countTimesValue[i];
    }
  }
  tally[0] = leftRows;
  tally[1] = missingRows;
}
