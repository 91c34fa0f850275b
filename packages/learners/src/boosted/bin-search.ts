import type { TableView } from "@nightshift/core";
import { type BinMapper, MISSING_BIN } from "../binning/bin-mapper.js";

/**
 * Branch-free binning with a fitted mapper, for the many rows a fit or a prediction bins.
 * It gives exactly the mapper's bins (binRows / numericBin): the first bin whose upper edge is
 * >= the value, i.e. the number of edges below it, and MISSING_BIN for NaN.
 */

/** Each numeric feature's upper edges at 256·f, padded with +∞ to 256 entries. */
export function paddedEdges(mapper: BinMapper): Float64Array {
  const edges = new Float64Array(256 * mapper.features.length).fill(Infinity);
  mapper.features.forEach((bins, f) => {
    if (bins.kind === "numeric") edges.set(bins.upperEdges, 256 * f);
  });
  return edges;
}

/** Bin of value v on the feature whose padded edges start at `from`: eight halvings, no branch. */
export function binOf(edges: Float64Array, from: number, v: number): number {
  let b = +(edges[from + 127] < v) << 7;
  b += +(edges[from + b + 63] < v) << 6;
  b += +(edges[from + b + 31] < v) << 5;
  b += +(edges[from + b + 15] < v) << 4;
  b += +(edges[from + b + 7] < v) << 3;
  b += +(edges[from + b + 3] < v) << 2;
  b += +(edges[from + b + 1] < v) << 1;
  b += +(edges[from + b] < v);
  // NaN fails every comparison (b = 0) and becomes the missing bin.
  return b | (+(v !== v) * MISSING_BIN);
}

/**
 * The view's rows binned column by column with the bins the tree grower uses: value bins as
 * the mapper gives them and missing values in bin `binCount` (right after the value bins).
 */
export function binTrainingRows(mapper: BinMapper, view: TableView, binCounts: Uint16Array): Uint8Array[] {
  const n = view.rows.length;
  const edges = paddedEdges(mapper);
  return mapper.features.map((bins, f) => {
    const column = view.columns[f];
    const out = new Uint8Array(n);
    const missing = binCounts[f];
    if (bins.kind === "numeric" && column.kind !== "categorical") {
      const values = column.values;
      const from = 256 * f;
      for (let r = 0; r < n; r++) {
        const b = binOf(edges, from, values[view.rows[r]]);
        out[r] = b === MISSING_BIN ? missing : b;
      }
    } else if (bins.kind === "categorical" && column.kind === "categorical") {
      const binOfCode = bins.binOfCode;
      for (let r = 0; r < n; r++) {
        const code = column.codes[view.rows[r]];
        const b = code >= 0 && code < binOfCode.length ? binOfCode[code] : MISSING_BIN;
        out[r] = b === MISSING_BIN ? missing : b;
      }
    } else {
      throw new TypeError(`feature ${column.name}: fitted as ${bins.kind}, given ${column.kind}`);
    }
    return out;
  });
}
