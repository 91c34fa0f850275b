import type { ChildProcess } from "node:child_process";
import { join } from "node:path";
import { createRng } from "@nightshift/core";
import { RunStore } from "@nightshift/store";
import { describe, expect, it } from "vitest";
import { allPredictions, nightshift, nightshiftAsync, storedFolds, SMALL_FAMILIES, tempDir, withoutTimings, writePlan, writeSmallTurbines } from "../e2e/helpers.js";
import { soakSeeds } from "./soak.js";

// Enough fold jobs (36) that 20 kills rarely run out of work even when resumes are quick.
const TRIALS = 12;
const FOLDS = 3;
const KILLS = 20;

const PLAN = `name: crash-anywhere
seed: 7
data: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id], holdout: 0.2 }
metric: average_precision
folds: { k: ${FOLDS} }
budget: { trials: ${TRIALS} }
${SMALL_FAMILIES}`;

const RUN_ARGS = ["--workers", "1", "--search-only"];

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** A kill moment: after a number of committed fold results, or after a delay from the start of the process. */
type Moment = { kind: "folds"; atLeast: number } | { kind: "delay"; ms: number };

function killMoments(seed: number): Moment[] {
  const rng = createRng("crash-anywhere", seed);
  const total = TRIALS * FOLDS;
  const counts = Array.from({ length: 14 }, () => 1 + rng.int(total - 1)).sort((a, b) => a - b);
  const delays = Array.from({ length: KILLS - counts.length }, () => ({ kind: "delay" as const, ms: 50 + rng.int(1200) }));
  // Delays are interleaved between the count-based kills so some land in start-up, some in resume, some mid-fold.
  const moments: Moment[] = counts.map((atLeast) => ({ kind: "folds", atLeast }));
  for (const d of delays) moments.splice(rng.int(moments.length + 1), 0, d);
  return moments;
}

async function killAt(child: ChildProcess, exited: Promise<number | null>, runDir: string, moment: Moment): Promise<"killed" | "finished"> {
  // One new fold result per count-based kill where possible (so kills land after real progress), never the last one.
  const target = moment.kind === "folds" ? Math.min(TRIALS * FOLDS - 1, Math.max(moment.atLeast, storedFolds(runDir) + 1)) : 0;
  let finished = false;
  void exited.then(() => {
    finished = true;
  });
  if (moment.kind === "delay") {
    await Promise.race([sleep(moment.ms), exited]);
  } else {
    while (!finished && storedFolds(runDir) < target) await sleep(15);
  }
  if (finished) return "finished";
  child.kill("SIGKILL");
  await exited;
  return "killed";
}

// One seed; `npm run soak` runs SOAK_FACTOR seeds (each its own 20 kill moments).
describe.each(soakSeeds(2026))("crash anywhere (local mode), seed %i", (seed) => {
  it(`ends, after ${KILLS} SIGKILLs at seeded-random moments and a resume after each, with the board and predictions of an uninterrupted run`, async () => {
    const dir = tempDir("crash");
    writeSmallTurbines(dir);
    const planPath = writePlan(dir, PLAN);
    const reference = nightshift(["run", planPath, "--run-dir", join(dir, "whole"), ...RUN_ARGS, "--json"], dir);
    expect(reference.stderr).toBe("");
    expect(reference.code).toBe(0);

    const runDir = join(dir, "killed");
    let kills = 0;
    for (const moment of killMoments(seed)) {
      const child = nightshiftAsync(["run", planPath, "--run-dir", runDir, ...RUN_ARGS, "--quiet"], dir);
      const stderr: Buffer[] = [];
      child.stderr?.on("data", (b: Buffer) => stderr.push(b));
      const exited = new Promise<number | null>((r) => child.on("exit", (code) => r(code)));
      const outcome = await killAt(child, exited, runDir, moment);
      if (outcome === "killed") kills += 1;
      // A resumed process that finishes before its kill moment must still have finished cleanly.
      else expect({ code: await exited, stderr: Buffer.concat(stderr).toString() }).toEqual({ code: 0, stderr: "" });
    }
    // A resume that completes the run before its kill moment cannot be killed; on a fast machine a
    // few late moments find the run already done. Most must still land in a live run.
    expect(kills).toBeGreaterThanOrEqual(KILLS - 5);

    const resumed = nightshift(["run", planPath, "--run-dir", runDir, ...RUN_ARGS, "--json"], dir);
    expect(resumed.stderr).toBe("");
    expect(resumed.code).toBe(0);
    expect(withoutTimings(JSON.parse(resumed.stdout))).toEqual(withoutTimings(JSON.parse(reference.stdout)));
    expect(allPredictions(runDir)).toEqual(allPredictions(join(dir, "whole")));

    const store = RunStore.open(runDir, { readonly: true });
    try {
      expect(store.integrityCheck()).toBe("ok");
      const keys = store.foldScores().map((r) => `${r.trial}/${r.fold}`);
      expect(keys.length).toBe(TRIALS * FOLDS);
      expect(new Set(keys).size).toBe(keys.length);
    } finally {
      store.close();
    }
  });
});
