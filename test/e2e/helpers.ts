import { type ChildProcess, spawn, spawnSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { fileURLToPath } from "node:url";
import { RunStore } from "@nightshift/store";
import { stringify } from "csv-stringify/sync";
import { generateTurbineRows, TURBINE_COLUMNS } from "../../packages/cli/src/demo/turbine-data.js";

export const CLI = fileURLToPath(new URL("../../packages/cli/bin/nightshift.js", import.meta.url));

export function tempDir(prefix: string): string {
  return mkdtempSync(join(tmpdir(), `nightshift-${prefix}-`));
}

/** A small turbine set (invented demo data) for end-to-end runs. */
export function writeSmallTurbines(dir: string, turbines = 60, weeks = 20): string {
  const path = join(dir, "turbines.csv");
  writeFileSync(path, stringify(generateTurbineRows({ turbines, weeks, seed: 11 }), { header: true, columns: [...TURBINE_COLUMNS] }));
  return path;
}

export const SMALL_FAMILIES = `families:
  logistic: { l2: { log_uniform: [1.0e-3, 10] } }
  tree: { depth: { int: [2, 6] } }
  forest: { trees: { int: [5, 15] }, depth: { choice: [4, 8] } }
  boosted: { rounds: { int: [10, 30] }, learning_rate: 0.2, leaves: 8, min_leaf: 5 }
  knn: { k: { int: [3, 15] } }
`;

export function writePlan(dir: string, body: string, name = "e2e.plan.yaml"): string {
  const path = join(dir, name);
  writeFileSync(path, body);
  return path;
}

export interface CliResult {
  readonly code: number | null;
  readonly stdout: string;
  readonly stderr: string;
}

export function nightshift(args: string[], cwd: string): CliResult {
  const r = spawnSync(process.execPath, [CLI, ...args], { cwd, encoding: "utf8", env: { ...process.env, NO_COLOR: "1" } });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

export function nightshiftAsync(args: string[], cwd: string): ChildProcess {
  return spawn(process.execPath, [CLI, ...args], { cwd, stdio: ["ignore", "pipe", "pipe"] });
}

/** The board JSON without what legitimately differs between runs (timings, the hold-out's opening time). */
export function withoutTimings(board: { rows: Array<Record<string, unknown>>; holdout?: Record<string, unknown> | null }): unknown {
  const holdout = board.holdout ? (({ opened_at: _o, ...rest }) => rest)(board.holdout) : board.holdout;
  return { ...board, rows: board.rows.map(({ fit_s: _f, predict_s: _p, ...rest }) => rest), holdout };
}

/** How many fold results a run folder holds, read without writing (0 while its store is missing or not yet readable). */
export function storedFolds(runDir: string): number {
  if (!RunStore.exists(runDir)) return 0;
  try {
    const store = RunStore.open(runDir, { readonly: true });
    try {
      return store.foldScores().length;
    } finally {
      store.close();
    }
  } catch {
    return 0;
  }
}

/** Every stored out-of-fold prediction of a run, keyed trial/fold. */
export function allPredictions(runDir: string): Record<string, number[]> {
  const store = RunStore.open(runDir, { readonly: true });
  try {
    const out: Record<string, number[]> = {};
    for (const t of store.trials()) for (const [fold, oof] of store.outOfFold(t.trial)) out[`${t.trial}/${fold}`] = Array.from(oof);
    return out;
  } finally {
    store.close();
  }
}
