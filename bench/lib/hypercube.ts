import { execFileSync } from "node:child_process";
import { existsSync, mkdirSync, readFileSync } from "node:fs";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import type { ClassTarget, NumericColumn, TrainView } from "@nightshift/core";

const here = dirname(fileURLToPath(import.meta.url));
export const BENCH_OUT = join(here, "..", "out");

export interface BenchSet {
  /** Prefix of the files on disk, for the Python side to read the same rows. */
  readonly prefix: string;
  readonly rows: number;
  readonly columns: NumericColumn[];
  readonly target: ClassTarget;
  /** The first 80% of rows train, the last 20% are predicted (one fold of 5). */
  readonly train: Uint32Array;
  readonly test: Uint32Array;
}

/**
 * The imbalanced benchmark set (Guyon 2003 hypercube design, ~3.5% positives), generated once by
 * bench/lib/make_hypercube.py with Debian's scikit-learn and cached in bench/out/.
 */
export function loadHypercube(rows = 100_000, seed = 0): BenchSet {
  mkdirSync(BENCH_OUT, { recursive: true });
  const prefix = join(BENCH_OUT, `hypercube-${rows}-${seed}`);
  if (!existsSync(`${prefix}.json`)) {
    execFileSync("/usr/bin/python3", [join(here, "make_hypercube.py"), String(rows), prefix, String(seed)], { stdio: "inherit" });
  }
  const x = new Float32Array(readFileSync(`${prefix}.x.f32`).buffer.slice(0));
  const y = readFileSync(`${prefix}.y.u8`);
  const features = 30;
  const columns: NumericColumn[] = [];
  for (let f = 0; f < features; f++) {
    const values = new Float32Array(rows);
    for (let r = 0; r < rows; r++) values[r] = x[r * features + f];
    columns.push({ name: `x${f}`, kind: "numeric", values });
  }
  const target: ClassTarget = { name: "y", kind: "classes", codes: Int32Array.from(y), labels: ["0", "1"] };
  const cut = Math.floor(rows * 0.8);
  const train = Uint32Array.from({ length: cut }, (_, i) => i);
  const test = Uint32Array.from({ length: rows - cut }, (_, i) => cut + i);
  return { prefix, rows, columns, target, train, test };
}

export function trainViewOf(set: BenchSet): TrainView {
  return { columns: set.columns, rows: set.train, task: "binary", target: set.target };
}

/** Milliseconds of `fn`, best of `repeats`. */
export function timeBest<T>(fn: () => T, repeats = 1): { ms: number; result: T } {
  let best = Infinity;
  let result!: T;
  for (let i = 0; i < repeats; i++) {
    const start = performance.now();
    result = fn();
    best = Math.min(best, performance.now() - start);
  }
  return { ms: best, result };
}
