import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { killAt, killMoments, storeAudit } from "./kill-moments.js";
import { allPredictions, nightshift, nightshiftAsync, SMALL_FAMILIES, tempDir, withoutTimings, writePlan, writeSmallTurbines } from "../e2e/helpers.js";
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
    for (const moment of killMoments("crash-anywhere", seed, TRIALS * FOLDS, KILLS)) {
      const child = nightshiftAsync(["run", planPath, "--run-dir", runDir, ...RUN_ARGS, "--quiet"], dir);
      const stderr: Buffer[] = [];
      child.stderr?.on("data", (b: Buffer) => stderr.push(b));
      const exited = new Promise<number | null>((r) => child.on("exit", (code) => r(code)));
      const outcome = await killAt(child, exited, runDir, moment, TRIALS * FOLDS);
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

    expect(storeAudit(runDir)).toEqual({ integrity: "ok", folds: TRIALS * FOLDS, distinct: TRIALS * FOLDS });
  });
});
