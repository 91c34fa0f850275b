import { MISSING_BIN } from "../binning/bin-mapper.js";
import { BITSET_WORDS, type TreeArrays } from "./tree-model.js";

/**
 * Adds one tree's leaf values for every row to `out` (row-major, `width` per row).
 * Callers loop over trees outside and rows inside, so one tree's arrays stay in cache while
 * all rows pass through it.
 */
export function addTreePredictions(tree: TreeArrays, bins: readonly Uint8Array[], rowCount: number, width: number, out: Float64Array): void {
  const { feature, threshold, missingLeft, left, right, categorySet, bitsets, leafValues } = tree;
  for (let r = 0; r < rowCount; r++) {
    let node = 0;
    for (;;) {
      const f = feature[node];
      if (f < 0) break;
      const bin = bins[f][r];
      const set = categorySet[node];
      const goesLeft =
        set < 0
          ? bin === MISSING_BIN
            ? missingLeft[node] === 1
            : bin <= threshold[node]
          : ((bitsets[set * BITSET_WORDS + (bin >>> 5)] >>> (bin & 31)) & 1) === 1;
      node = goesLeft ? left[node] : right[node];
    }
    const from = left[node] * width;
    const to = r * width;
    for (let k = 0; k < width; k++) out[to + k] += leafValues[from + k];
  }
}
