import { WASM_MEMORY_LIMIT } from "../wasm/encoder.js";
import { createScreeningKernel, PANEL_ROWS, QUERY_BLOCK, RECORD_BYTES } from "./screening-kernel.js";

/**
 * Exact k nearest neighbours (euclidean) of every query row among the training rows, by brute
 * force: every (query, training row) pair is screened by the single-precision SIMD kernel of
 * screening-kernel.ts, and the pairs that pass are measured exactly, in double precision, as
 * Σ_j (a_j − b_j)². The k smallest exact distances per query are kept in a bounded max-heap
 * (Knuth, TAOCP vol. 3, §5.2.3); its root, the k-th smallest distance so far, sets the query's
 * screening threshold for the next tile of training rows.
 *
 * The result depends only on the exact distances: the same neighbours as a plain double loop,
 * ties in distance broken by the lower training row, whatever the screening lets through.
 */
export interface Neighbours {
  /** Neighbours per query: min(k, training rows). */
  readonly k: number;
  /** Training row of the j-th nearest neighbour of query q at q·k + j, nearest first. */
  readonly rows: Int32Array;
  /** Squared euclidean distance of each neighbour, same layout. */
  readonly squaredDistances: Float64Array;
}

/** Queries screened per kernel call. */
const QUERY_CHUNK = 2048;
/** Bytes of training panels per kernel call, sized for the level-1 data cache. */
const TILE_BYTES = 32 * 1024;
/** Beyond this squared norm single precision could overflow: such a query is measured exactly against every row. */
const SINGLE_PRECISION_LIMIT = 1e30;
const UNIT_ROUNDOFF = 2 ** -24;

/**
 * Relative margin E such that an approximate squared distance L from the kernel satisfies
 * |L − D| ≤ E·(‖a‖² + ‖b‖²) for the true squared distance D. Rounding a and b to single
 * precision moves a·b by at most (2u + u²)‖a‖‖b‖; the p-term single-precision dot product adds
 * γ_p‖a‖‖b‖ with γ_p = p·u / (1 − p·u) (Higham 2002, Accuracy and Stability of Numerical
 * Algorithms, 2nd ed., §3.1); rounding the norms and the two final operations adds under 6u
 * relative to ‖a‖² + ‖b‖², using 2‖a‖‖b‖ ≤ ‖a‖² + ‖b‖². Doubling (p + 8)·u covers all of it.
 */
export function screeningMargin(features: number): number {
  return 2 * (features + 8) * UNIT_ROUNDOFF;
}

/** Rounds down / up by more than one single-precision unit, so the f32 store cannot round past v. */
const lowered = (v: number): number => v * (1 - 4 * UNIT_ROUNDOFF);
const raised = (v: number): number => v * (1 + 4 * UNIT_ROUNDOFF);

const roundUp = (value: number, multiple: number): number => Math.ceil(value / multiple) * multiple;

/**
 * `train` (n × p) and `queries` (m × p) are row-major double-precision matrices.
 */
export function nearestNeighbours(train: Float64Array, n: number, queries: Float64Array, m: number, p: number, k: number): Neighbours {
  const kk = Math.min(k, n);
  const rows = new Int32Array(m * kk);
  const squaredDistances = new Float64Array(m * kk);
  if (m === 0 || kk === 0) return { k: kk, rows, squaredDistances };

  const margin = screeningMargin(p);
  const panelCount = Math.ceil(n / PANEL_ROWS);
  const tilePanels = Math.max(1, Math.floor(TILE_BYTES / (p * 4 * PANEL_ROWS)));
  const chunk = Math.min(QUERY_CHUNK, roundUp(m, QUERY_BLOCK));

  let bytes = 0;
  const take = (size: number): number => {
    const at = bytes;
    bytes += roundUp(size, 16);
    return at;
  };
  const panelsAt = take(panelCount * p * PANEL_ROWS * 4);
  const panelNormsAt = take(panelCount * PANEL_ROWS * 4);
  const queryBlocksAt = take(chunk * p * 4);
  const queryNormsAt = take(chunk * 4);
  const thresholdsAt = take(chunk * 4);
  // Worst case: every query of the chunk flags every panel of a tile.
  const recordsAt = take(chunk * tilePanels * RECORD_BYTES);
  if (bytes > WASM_MEMORY_LIMIT)
    throw new RangeError(`knn: ${n} training rows × ${p} design columns need ${(bytes / 2 ** 30).toFixed(1)} GiB of single-precision panels, beyond the 4 GiB of a WebAssembly memory`);
  const kernel = createScreeningKernel(bytes);
  const f32 = new Float32Array(kernel.memory.buffer);
  const i32 = new Int32Array(kernel.memory.buffer);

  // Training panels and their norms, each lowered by its share of the rounding margin.
  let trainTooLarge = false;
  for (let panel = 0; panel < panelCount; panel++) {
    const base = (panelsAt / 4) + panel * p * PANEL_ROWS;
    for (let lane = 0; lane < PANEL_ROWS; lane++) {
      const row = panel * PANEL_ROWS + lane;
      if (row >= n) {
        f32[(panelNormsAt / 4) + row] = NaN;
        continue;
      }
      let norm = 0;
      for (let j = 0, at = row * p; j < p; j++, at++) {
        const v = train[at];
        f32[base + j * PANEL_ROWS + lane] = v;
        norm += v * v;
      }
      if (!(norm <= SINGLE_PRECISION_LIMIT)) trainTooLarge = true;
      f32[(panelNormsAt / 4) + row] = lowered(norm * (1 - margin));
    }
  }

  const heapDistances = new Float64Array(chunk * kk);
  const heapRows = new Int32Array(chunk * kk);
  const heapSizes = new Int32Array(chunk);
  const queryNorms = new Float64Array(chunk);
  const exactOnly = new Uint8Array(chunk);
  // Offsets are multiples of 16 bytes; words are indexed by offset / 4 (not >> 2, which breaks past 2 GiB).
  const thresholds = thresholdsAt / 4;

  for (let first = 0; first < m; first += chunk) {
    const count = Math.min(chunk, m - first);
    const blocks = Math.ceil(count / QUERY_BLOCK);
    for (let local = 0; local < blocks * QUERY_BLOCK; local++) {
      const q = first + local;
      const base = (queryBlocksAt / 4) + Math.floor(local / QUERY_BLOCK) * p * QUERY_BLOCK + (local % QUERY_BLOCK);
      let norm = 0;
      for (let j = 0; j < p; j++) {
        const v = q < m ? queries[q * p + j] : 0;
        f32[base + j * QUERY_BLOCK] = v;
        norm += v * v;
      }
      const present = local < count;
      exactOnly[local] = present && (trainTooLarge || !(norm <= SINGLE_PRECISION_LIMIT)) ? 1 : 0;
      queryNorms[local] = norm;
      // A NaN norm or threshold never passes the screen: padding, and queries measured exactly below.
      f32[(queryNormsAt / 4) + local] = present && !exactOnly[local] ? norm : NaN;
      f32[thresholds + local] = present && !exactOnly[local] ? Infinity : NaN;
    }
    heapSizes.fill(0);

    const offer = (local: number, row: number): void => {
      const d = squaredDistance(queries, (first + local) * p, train, row * p, p);
      const size = heapOffer(heapDistances, heapRows, local * kk, heapSizes[local], kk, d, row);
      heapSizes[local] = size;
      if (size === kk && !exactOnly[local]) f32[thresholds + local] = raised(heapDistances[local * kk] + margin * queryNorms[local]);
    };

    // Tiles start with just enough rows to fill every heap and then double: while the thresholds
    // are loose nearly every row passes the screen, so early tiles are kept small.
    for (let panel = 0, tile = Math.min(Math.ceil(kk / PANEL_ROWS), tilePanels); panel < panelCount; panel += tile, tile = Math.min(panel, tilePanels)) {
      const records = kernel.screen({
        queryBlocks: queryBlocksAt,
        queryBlockCount: blocks,
        queryNorms: queryNormsAt,
        thresholds: thresholdsAt,
        panels: panelsAt + panel * p * PANEL_ROWS * 4,
        panelCount: Math.min(tile, panelCount - panel),
        panelNorms: panelNormsAt + panel * PANEL_ROWS * 4,
        features: p,
        firstPanel: panel,
        records: recordsAt,
      });
      for (let r = 0, at = recordsAt / 4; r < records; r++, at += 3) {
        const local = i32[at];
        const base = i32[at + 1] * PANEL_ROWS;
        const mask = i32[at + 2];
        for (let lane = 0; lane < PANEL_ROWS; lane++) if ((mask >> lane) & 1 && base + lane < n) offer(local, base + lane);
      }
    }
    for (let local = 0; local < count; local++) if (exactOnly[local]) for (let row = 0; row < n; row++) offer(local, row);

    for (let local = 0; local < count; local++)
      heapSortInto(heapDistances, heapRows, local * kk, heapSizes[local], squaredDistances, rows, (first + local) * kk);
  }
  return { k: kk, rows, squaredDistances };
}

/** Σ_j (a_j − b_j)² with four partial sums in a fixed order (shorter dependency chains, same result on every run). */
function squaredDistance(a: Float64Array, aAt: number, b: Float64Array, bAt: number, p: number): number {
  let s0 = 0;
  let s1 = 0;
  let s2 = 0;
  let s3 = 0;
  let j = 0;
  for (; j + 3 < p; j += 4) {
    const t0 = a[aAt + j] - b[bAt + j];
    const t1 = a[aAt + j + 1] - b[bAt + j + 1];
    const t2 = a[aAt + j + 2] - b[bAt + j + 2];
    const t3 = a[aAt + j + 3] - b[bAt + j + 3];
    s0 += t0 * t0;
    s1 += t1 * t1;
    s2 += t2 * t2;
    s3 += t3 * t3;
  }
  for (; j < p; j++) {
    const t = a[aAt + j] - b[bAt + j];
    s0 += t * t;
  }
  return s0 + s1 + (s2 + s3);
}

/** Whether entry i ranks after entry j: larger distance, or equal distance and later training row. */
function after(distances: Float64Array, rows: Int32Array, i: number, j: number): boolean {
  return distances[i] > distances[j] || (distances[i] === distances[j] && rows[i] > rows[j]);
}

function swap(distances: Float64Array, rows: Int32Array, i: number, j: number): void {
  const d = distances[i];
  distances[i] = distances[j];
  distances[j] = d;
  const r = rows[i];
  rows[i] = rows[j];
  rows[j] = r;
}

function siftDown(distances: Float64Array, rows: Int32Array, base: number, size: number, start: number): void {
  let i = start;
  for (;;) {
    const left = 2 * i + 1;
    if (left >= size) return;
    let largest = left;
    if (left + 1 < size && after(distances, rows, base + left + 1, base + left)) largest = left + 1;
    if (!after(distances, rows, base + largest, base + i)) return;
    swap(distances, rows, base + i, base + largest);
    i = largest;
  }
}

/** Offers (d, row) to the max-heap at `base` holding `size` of at most `k` entries; returns the new size. */
function heapOffer(distances: Float64Array, rows: Int32Array, base: number, size: number, k: number, d: number, row: number): number {
  if (size < k) {
    let i = size;
    distances[base + i] = d;
    rows[base + i] = row;
    while (i > 0) {
      const parent = (i - 1) >> 1;
      if (!after(distances, rows, base + i, base + parent)) break;
      swap(distances, rows, base + i, base + parent);
      i = parent;
    }
    return size + 1;
  }
  if (d < distances[base] || (d === distances[base] && row < rows[base])) {
    distances[base] = d;
    rows[base] = row;
    siftDown(distances, rows, base, size, 0);
  }
  return size;
}

/** Empties the heap into `outDistances`/`outRows` at `outAt`, nearest first. */
function heapSortInto(distances: Float64Array, rows: Int32Array, base: number, size: number, outDistances: Float64Array, outRows: Int32Array, outAt: number): void {
  for (let remaining = size; remaining > 0; remaining--) {
    outDistances[outAt + remaining - 1] = distances[base];
    outRows[outAt + remaining - 1] = rows[base];
    swap(distances, rows, base, base + remaining - 1);
    siftDown(distances, rows, base, remaining - 1, 0);
  }
}
