import { spawnSync } from "node:child_process";
import { statSync } from "node:fs";
import { join } from "node:path";
import { RunStore } from "@nightshift/store";
import { describe, expect, it } from "vitest";
import { CLI, nightshift, nightshiftAsync, storedFolds, SMALL_FAMILIES, tempDir, withoutTimings, writePlan, writeSmallTurbines } from "../e2e/helpers.js";

const PLAN = `name: disk-full
seed: 7
data: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id], holdout: 0.2 }
metric: average_precision
folds: { k: 3 }
budget: { trials: 8 }
${SMALL_FAMILIES}`;

const RUN_ARGS = ["--workers", "1", "--search-only"];

interface Snapshot {
  readonly scores: ReturnType<RunStore["foldScores"]>;
  readonly predictions: Record<string, number[]>;
}

function snapshot(runDir: string): Snapshot {
  const store = RunStore.open(runDir, { readonly: true });
  try {
    const predictions: Record<string, number[]> = {};
    for (const t of store.trials()) for (const [fold, oof] of store.outOfFold(t.trial)) predictions[`${t.trial}/${fold}`] = Array.from(oof);
    return { scores: store.foldScores(), predictions };
  } finally {
    store.close();
  }
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/**
 * A full disk, simulated with the file-size limit (RLIMIT_FSIZE, set on the running coordinator with
 * util-linux `prlimit`): every write past the limit fails with EFBIG, as a write to a full disk fails with
 * ENOSPC. The tests run as root, where a read-only mode bit does not stop writes and mounts are not allowed.
 */
describe("the disk stops taking writes mid-run", () => {
  it("stops with one clear message, keeps what was stored intact, and resumes to the uninterrupted result", async () => {
    const dir = tempDir("disk");
    writeSmallTurbines(dir);
    const planPath = writePlan(dir, PLAN);
    const reference = nightshift(["run", planPath, "--run-dir", join(dir, "whole"), ...RUN_ARGS, "--json"], dir);
    expect(reference.code).toBe(0);

    const runDir = join(dir, "full");
    const child = nightshiftAsync(["run", planPath, "--run-dir", runDir, ...RUN_ARGS, "--quiet"], dir);
    const stderr: Buffer[] = [];
    child.stderr?.on("data", (b: Buffer) => stderr.push(b));
    const exited = new Promise<number | null>((r) => child.on("exit", (code) => r(code)));
    while (storedFolds(runDir) < 6) await sleep(15);
    const file = join(runDir, "run.sqlite");
    // The smaller of the two files' sizes: the next write that grows either file fails.
    const limit = Math.min(statSync(file).size, statSync(`${file}-wal`).size);
    const prlimit = spawnSync("prlimit", ["--pid", String(child.pid), `--fsize=${limit}:${limit}`], { encoding: "utf8" });
    expect(prlimit.stderr).toBe("");
    const code = await exited;
    const message = Buffer.concat(stderr).toString();

    expect(code).toBe(1);
    expect(message).toMatch(/^nightshift: .*run\.sqlite: cannot write the run store \(SQLITE_[A-Z_]+: .*\); the disk may be full or read-only\. .*resume/);
    expect(message.trim().split("\n")).toHaveLength(1);
    expect(message).not.toMatch(/\n\s+at /);

    const stored = snapshot(runDir);
    expect(stored.scores.length).toBeGreaterThanOrEqual(6);
    expect(stored.scores.length).toBeLessThan(24);
    const check = RunStore.open(runDir, { readonly: true });
    expect(check.integrityCheck()).toBe("ok");
    check.close();

    // Space is back: the same command resumes, and what was stored before the failure is unchanged.
    const resumed = nightshift(["run", planPath, "--run-dir", runDir, ...RUN_ARGS, "--json"], dir);
    expect(resumed.stderr).toBe("");
    expect(resumed.code).toBe(0);
    expect(withoutTimings(JSON.parse(resumed.stdout))).toEqual(withoutTimings(JSON.parse(reference.stdout)));
    const after = snapshot(runDir);
    for (const row of stored.scores) expect(after.scores).toContainEqual(row);
    for (const [key, oof] of Object.entries(stored.predictions)) expect(after.predictions[key]).toEqual(oof);
    expect(after.predictions).toEqual(snapshot(join(dir, "whole")).predictions);
  });

  it("refuses to start on a disk that takes no writes, with one clear message, and starts once it does", () => {
    const dir = tempDir("disk0");
    writeSmallTurbines(dir);
    const planPath = writePlan(dir, PLAN);
    const runDir = join(dir, "run");
    const refused = spawnSync("prlimit", ["--fsize=0", process.execPath, CLI, "run", planPath, "--run-dir", runDir, ...RUN_ARGS, "--quiet"], { cwd: dir, encoding: "utf8" });
    expect(refused.status).toBe(1);
    expect(refused.stderr).toMatch(/^nightshift: .*: cannot write.*the disk may be full or read-only\. .*resume/);
    expect(refused.stderr.trim().split("\n")).toHaveLength(1);
    const started = nightshift(["run", planPath, "--run-dir", runDir, ...RUN_ARGS, "--quiet"], dir);
    expect(started.stderr).toBe("");
    expect(started.code).toBe(0);
    expect(snapshot(runDir).scores).toHaveLength(24);
  });
});
