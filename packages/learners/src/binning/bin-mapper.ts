import { createRng, MISSING_CODE, type Rng, type TableView } from "@nightshift/core";
import type { FitContext } from "../learner.js";

/**
 * Per-feature quantile binning shared by every tree family (Ke et al. 2017 histogram
 * method; at most 255 value bins plus one reserved bin for missing values, so a bin
 * fits in a byte). The mapper is fitted on training rows only and then applied to
 * any rows, so no information from predicted rows reaches the fit.
 */
export const MISSING_BIN = 255;
export const MAX_VALUE_BINS = 255;

/** Numeric feature: value v falls in the first bin b with v <= upperEdges[b]; the last edge is +Infinity. */
export interface NumericBins {
  readonly kind: "numeric";
  readonly upperEdges: Float64Array;
}

/**
 * Categorical feature: each category seen in training (up to 254 most frequent) gets a bin;
 * unseen and rare categories share the missing bin.
 */
export interface CategoricalBins {
  readonly kind: "categorical";
  /** bin per category code (index = code), MISSING_BIN when the code has no bin. */
  readonly binOfCode: Int32Array;
  readonly binCount: number;
}

export type FeatureBins = NumericBins | CategoricalBins;

export interface BinMapper {
  readonly features: readonly FeatureBins[];
}

/** Bins of the rows of a view, one byte per (feature, row), column-major. */
export interface BinnedMatrix {
  readonly rowCount: number;
  /** bins[f][r] = bin of view row r on feature f. */
  readonly bins: readonly Uint8Array[];
  /** Number of value bins per feature (missing bin excluded). 1 means constant: never split. */
  readonly binCounts: Uint16Array;
  /** Whether feature f is categorical (splits are category sets rather than thresholds). */
  readonly categorical: readonly boolean[];
}

/** Rows used to place numeric edges; more adds time and barely moves quantiles. */
const EDGE_SAMPLE_ROWS = 200_000;

export function binCount(bins: FeatureBins): number {
  return bins.kind === "numeric" ? bins.upperEdges.length : bins.binCount;
}

export function fitBinMapper(view: TableView, maxBins: number = MAX_VALUE_BINS, rng?: Rng): BinMapper {
  if (!(maxBins >= 2 && maxBins <= MAX_VALUE_BINS)) throw new RangeError(`maxBins must be in [2, ${MAX_VALUE_BINS}]`);
  let rows = view.rows;
  if (rows.length > EDGE_SAMPLE_ROWS) {
    // A stream of its own unless given one, so binning never shifts a caller's random draws.
    const sampler = rng ?? createRng("bin-edge-sample", rows.length);
    const picked = new Uint32Array(EDGE_SAMPLE_ROWS);
    for (let i = 0; i < EDGE_SAMPLE_ROWS; i++) picked[i] = rows[sampler.int(rows.length)];
    rows = picked;
  }
  const scratch = new RadixScratch(rows.length);
  const features = view.columns.map((column): FeatureBins => {
    if (column.kind === "categorical") return fitCategoricalBins(column.codes, column.vocabulary.length, view.rows, maxBins);
    return { kind: "numeric", upperEdges: numericEdges(column.values, rows, maxBins, scratch) };
  });
  return { features };
}

function numericEdges(values: Float32Array | Float64Array, rows: Uint32Array, maxBins: number, scratch: RadixScratch): Float64Array {
  const present = scratch.values;
  let m = 0;
  for (let i = 0; i < rows.length; i++) {
    const v = values[rows[i]];
    if (!Number.isNaN(v)) present[m++] = v;
  }
  const sorted = sortValues(present.subarray(0, m), scratch);
  let distinct = 0;
  for (let i = 0; i < m && distinct <= maxBins; i++) if (i === 0 || sorted[i] !== sorted[i - 1]) distinct++;
  const edges: number[] = [];
  if (distinct <= maxBins) {
    // One bin per distinct value; cut half-way between neighbours.
    for (let i = 1; i < m; i++) if (sorted[i] !== sorted[i - 1]) edges.push((sorted[i - 1] + sorted[i]) / 2);
  } else {
    // Quantile cuts over the sorted (not distinct) values, then half-way to the next distinct value.
    let previous = -Infinity;
    for (let b = 1; b < maxBins; b++) {
      const q = sorted[Math.floor((b * m) / maxBins)];
      if (q <= previous) continue;
      const next = nextLarger(sorted, q);
      if (next === undefined) break;
      const edge = (q + next) / 2;
      if (edge > previous) edges.push(edge);
      previous = next;
    }
  }
  edges.push(Infinity);
  return Float64Array.from(edges);
}

/** Buffers of one fitBinMapper call, reused for every feature. */
class RadixScratch {
  readonly values: Float64Array;
  readonly high: Uint32Array;
  readonly low: Uint32Array;
  readonly highOut: Uint32Array;
  readonly lowOut: Uint32Array;
  readonly counts = new Uint32Array(1 << 16);
  constructor(rows: number) {
    this.values = new Float64Array(rows);
    this.high = new Uint32Array(rows);
    this.low = new Uint32Array(rows);
    this.highOut = new Uint32Array(rows);
    this.lowOut = new Uint32Array(rows);
  }
}

/**
 * Sorts finite or infinite doubles in place, ascending (−0 before +0, as TypedArray sort does):
 * an LSD radix sort over 16-bit digits of the IEEE-754 bits, with the sign bit flipped (and all
 * bits of negatives inverted) so unsigned order is numeric order. Digits that are the same for
 * every value are skipped; values read from float32 columns have two such digits.
 */
function sortValues(values: Float64Array, scratch: RadixScratch): Float64Array {
  const n = values.length;
  const words = new Uint32Array(values.buffer, values.byteOffset, n * 2);
  let high = scratch.high;
  let low = scratch.low;
  let highOut = scratch.highOut;
  let lowOut = scratch.lowOut;
  // Little-endian: word 2i is the low half of value i.
  for (let i = 0; i < n; i++) {
    const h = words[2 * i + 1];
    const negative = h >>> 31 === 1;
    high[i] = negative ? ~h >>> 0 : (h | 0x80000000) >>> 0;
    low[i] = negative ? ~words[2 * i] >>> 0 : words[2 * i];
  }
  const counts = scratch.counts;
  for (let pass = 0; pass < 4; pass++) {
    const keys = pass < 2 ? low : high;
    const shift = (pass & 1) * 16;
    counts.fill(0);
    for (let i = 0; i < n; i++) counts[(keys[i] >>> shift) & 0xffff]++;
    if (n === 0 || counts[(keys[0] >>> shift) & 0xffff] === n) continue;
    let sum = 0;
    for (let d = 0; d < counts.length; d++) {
      const c = counts[d];
      counts[d] = sum;
      sum += c;
    }
    for (let i = 0; i < n; i++) {
      const at = counts[(keys[i] >>> shift) & 0xffff]++;
      highOut[at] = high[i];
      lowOut[at] = low[i];
    }
    [high, highOut] = [highOut, high];
    [low, lowOut] = [lowOut, low];
  }
  for (let i = 0; i < n; i++) {
    const h = high[i];
    const negative = h >>> 31 === 0;
    words[2 * i + 1] = negative ? ~h >>> 0 : h & 0x7fffffff;
    words[2 * i] = negative ? ~low[i] >>> 0 : low[i];
  }
  return values;
}

function nextLarger(sorted: Float64Array, value: number): number | undefined {
  let lo = 0;
  let hi = sorted.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (sorted[mid] <= value) lo = mid + 1;
    else hi = mid;
  }
  return lo < sorted.length ? sorted[lo] : undefined;
}

function fitCategoricalBins(codes: Int32Array, vocabularySize: number, rows: Uint32Array, maxBins: number): CategoricalBins {
  const counts = new Float64Array(vocabularySize);
  for (let i = 0; i < rows.length; i++) {
    const code = codes[rows[i]];
    if (code !== MISSING_CODE && code < vocabularySize) counts[code]++;
  }
  const seen: number[] = [];
  for (let code = 0; code < vocabularySize; code++) if (counts[code] > 0) seen.push(code);
  // Keep the most frequent categories (ties by code); bins are assigned in code order.
  const kept = seen.length <= maxBins - 1 ? seen : [...seen].sort((a, b) => counts[b] - counts[a] || a - b).slice(0, maxBins - 1).sort((a, b) => a - b);
  const binOfCode = new Int32Array(vocabularySize).fill(MISSING_BIN);
  kept.forEach((code, bin) => (binOfCode[code] = bin));
  return { kind: "categorical", binOfCode, binCount: Math.max(1, kept.length) };
}

/** Bin of one value of a numeric feature. */
export function numericBin(upperEdges: Float64Array, value: number): number {
  if (Number.isNaN(value)) return MISSING_BIN;
  let lo = 0;
  let hi = upperEdges.length - 1;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (value <= upperEdges[mid]) hi = mid;
    else lo = mid + 1;
  }
  return lo;
}

/** Applies a fitted mapper to the rows of a view (training rows or rows to predict). */
export function binRows(mapper: BinMapper, view: TableView): BinnedMatrix {
  const n = view.rows.length;
  const padded = new Float64Array(256);
  const bins = mapper.features.map((feature, f) => {
    const column = view.columns[f];
    const out = new Uint8Array(n);
    if (feature.kind === "numeric") {
      if (column.kind === "categorical") throw new TypeError(`feature ${column.name}: fitted as numeric, given categorical`);
      padded.fill(Infinity);
      padded.set(feature.upperEdges);
      binNumericRows(padded, column.values, view.rows, out);
    } else {
      if (column.kind !== "categorical") throw new TypeError(`feature ${column.name}: fitted as categorical, given numeric`);
      const codes = column.codes;
      const size = feature.binOfCode.length;
      for (let r = 0; r < n; r++) {
        const code = codes[view.rows[r]];
        out[r] = code >= 0 && code < size ? feature.binOfCode[code] : MISSING_BIN;
      }
    }
    return out;
  });
  const binCounts = Uint16Array.from(mapper.features, binCount);
  return { rowCount: n, bins, binCounts, categorical: mapper.features.map((f) => f.kind === "categorical") };
}

/**
 * numericBin for many rows: a fixed eight-step binary search over the edges padded with
 * +Infinity to 256, each step adding its width when the value lies above the probed edge.
 * Steps are chosen by arithmetic rather than branches, which random values mispredict.
 */
function binNumericRows(edges: Float64Array, values: Float32Array | Float64Array, rows: Uint32Array, out: Uint8Array): void {
  for (let r = 0; r < rows.length; r++) {
    const v = values[rows[r]];
    let bin = 0;
    bin += 128 & -(edges[bin + 127] < v);
    bin += 64 & -(edges[bin + 63] < v);
    bin += 32 & -(edges[bin + 31] < v);
    bin += 16 & -(edges[bin + 15] < v);
    bin += 8 & -(edges[bin + 7] < v);
    bin += 4 & -(edges[bin + 3] < v);
    bin += 2 & -(edges[bin + 1] < v);
    bin += 1 & -(edges[bin] < v);
    out[r] = Number.isNaN(v) ? MISSING_BIN : bin;
  }
}

/** JSON form of a mapper (edges as number arrays; +Infinity written as null). */
export function binMapperToJSON(mapper: BinMapper): unknown {
  return mapper.features.map((f) =>
    f.kind === "numeric"
      ? { kind: "numeric", upperEdges: Array.from(f.upperEdges, (e) => (Number.isFinite(e) ? e : null)) }
      : { kind: "categorical", binOfCode: Array.from(f.binOfCode), binCount: f.binCount },
  );
}

export function binMapperFromJSON(json: unknown): BinMapper {
  const features = (json as Array<{ kind: string; upperEdges?: Array<number | null>; binOfCode?: number[]; binCount?: number }>).map(
    (f): FeatureBins =>
      f.kind === "numeric"
        ? { kind: "numeric", upperEdges: Float64Array.from(f.upperEdges ?? [], (e) => (e === null ? Infinity : e)) }
        : { kind: "categorical", binOfCode: Int32Array.from(f.binOfCode ?? []), binCount: f.binCount ?? 1 },
  );
  return { features };
}

/**
 * The binned training rows of a fit, reused across fits on the same training rows (same
 * fold) when the runner offers a memo: bins depend on the rows and the bin count only.
 */
export function binTrainingRows(view: TableView, maxBins: number = MAX_VALUE_BINS, context?: FitContext): { mapper: BinMapper; binned: BinnedMatrix } {
  const compute = (): { mapper: BinMapper; binned: BinnedMatrix } => {
    const mapper = fitBinMapper(view, maxBins);
    return { mapper, binned: binRows(mapper, view) };
  };
  if (!context) return compute();
  const key = `${context.key}:bins:${maxBins}:${view.rows.length}`;
  let entry = context.memo.get(key) as { mapper: BinMapper; binned: BinnedMatrix } | undefined;
  if (!entry) {
    entry = compute();
    context.memo.set(key, entry);
  }
  return entry;
}
