import { writeFileSync } from "node:fs";
import { join } from "node:path";
import { createRng } from "@nightshift/core";
import { RunStore } from "@nightshift/store";
import { acceptJob, JOB_QUEUE, queueConnection, RefusedJob, redisEndpoint } from "@nightshift/worker";
import { type Job, UnrecoverableError, Worker } from "bullmq";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { soakSeeds } from "./soak.js";
import { allPredictions, tempDir, withoutTimings, writePlan, writeSmallTurbines } from "../e2e/helpers.js";
import { findRedis, redisSession, type Spawned, spawnCli, startWorkers, stopAll } from "../redis/redis-fixture.js";
import { sleep, storeAudit } from "./kill-moments.js";

const redis = await findRedis();

// Fits of a few tenths of a second, so most kills land while a worker is inside a fit.
const TRIALS = 20;
const FOLDS = 3;
const TOTAL = TRIALS * FOLDS;
const KILLS = 10;
const PLAN = `name: redis-workers
seed: 3
data: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id], holdout: 0.2 }
metric: average_precision
folds: { k: ${FOLDS} }
budget: { trials: ${TRIALS} }
families:
  forest: { trees: { int: [150, 250] }, depth: { choice: [8, 12] } }
  boosted: { rounds: { int: [150, 250] }, learning_rate: 0.1, leaves: 16, min_leaf: 5 }
`;

type Board = { rows: Array<Record<string, unknown>> };

/**
 * A regression set with a column repeated: ridge without a penalty (logistic family, l2 = 0)
 * cannot solve it and its fit throws; with l2 > 0, and for trees, it is an ordinary set.
 */
function writeRepeatedColumn(dir: string): string {
  const rng = createRng("repeated-column", 1);
  const rows = ["x,x_again,z,y"];
  for (let i = 0; i < 90; i++) {
    const x = Math.round(rng.next() * 10_000) / 1000;
    const z = Math.round((rng.next() * 2 - 1) * 1000) / 1000;
    rows.push(`${x},${x},${z},${(2 * x + z + (rng.next() - 0.5) / 5).toFixed(3)}`);
  }
  writeFileSync(join(dir, "repeated.csv"), rows.join("\n"));
  return writePlan(
    dir,
    `name: fit-throws
seed: 5
data: { train: repeated.csv, target: y, holdout: 0 }
folds: { k: 3 }
budget: { trials: 8 }
families:
  logistic: { l2: { choice: [0, 1] } }
  tree: { depth: { int: [2, 4] } }
`,
    "fit-throws.plan.yaml",
  );
}

describe.skipIf(redis === null)("workers killed and started during a Redis run", () => {
  const url = redis?.url ?? "";
  const dir = tempDir("redis-workers");
  const { namespace, track, cleanup } = redisSession(url);
  let planPath = "";
  let localBoard: Board;

  const coordinator = (plan: string, runDir: string, ns: string): Spawned => track(spawnCli(["run", plan, "--run-dir", runDir, "--redis", url, "--namespace", ns, "--search-only", "--json"], dir));

  beforeAll(async () => {
    writeSmallTurbines(dir, 60, 20);
    planPath = writePlan(dir, PLAN);
    const local = track(spawnCli(["run", planPath, "--run-dir", join(dir, "local"), "--search-only", "--json"], dir));
    expect(await local.exited, local.output()).toBe(0);
    localBoard = JSON.parse(local.stdout());
  });

  afterAll(async () => {
    await cleanup();
    await redis?.stop();
  });

  // One seed; `npm run soak` runs SOAK_FACTOR seeds.
  it.each(soakSeeds(2026))(`ends with the local run's board and predictions after ${KILLS} SIGKILLs of random workers at seeded moments, new workers started each time (seed %i)`, async (seed) => {
    // The undisturbed run of the same plan on two workers, for the time it takes.
    const calm = namespace();
    const calmWorkers = (await startWorkers(url, calm, 2, dir)).map(track);
    let started = Date.now();
    const undisturbed = coordinator(planPath, join(dir, `undisturbed-${seed}`), calm);
    expect(await undisturbed.exited, undisturbed.output()).toBe(0);
    const undisturbedMs = Date.now() - started;
    await stopAll(calmWorkers);
    expect(withoutTimings(JSON.parse(undisturbed.stdout()))).toEqual(withoutTimings(localBoard));

    const ns = namespace();
    const live = (await startWorkers(url, ns, 2, dir)).map(track);
    const rng = createRng("redis-workers", seed);
    // Kill moments at seeded fractions of the undisturbed run's time: the disturbed run lasts longer.
    const schedule = Array.from({ length: KILLS }, () => ({ at: (0.05 + 0.9 * rng.next()) * undisturbedMs, victim: rng.int(1000) })).sort((a, b) => a.at - b.at);
    const runDir = join(dir, `disturbed-${seed}`);
    started = Date.now();
    const run = coordinator(planPath, runDir, ns);
    let running = true;
    void run.exited.then(() => (running = false));
    let kills = 0;
    const starting: Array<Promise<void>> = [];
    for (const event of schedule) {
      while (running && (Date.now() - started < event.at || live.length === 0)) await sleep(15);
      if (!running) break;
      const [victim] = live.splice(event.victim % live.length, 1);
      victim.child.kill("SIGKILL");
      expect(await victim.exited).toBeNull();
      kills += 1;
      // A new worker for each one killed; it joins the victims once it serves (a kill may find
      // every worker starting, and waits for one).
      starting.push(startWorkers(url, ns, 1, dir).then((started) => void live.push(...started.map(track))));
    }
    expect(await run.exited, run.output()).toBe(0);
    await Promise.all(starting);
    const disturbedMs = Date.now() - started;
    // Kills after the run finished cannot land; most of them must.
    expect(kills).toBeGreaterThanOrEqual(KILLS - 2);
    expect(withoutTimings(JSON.parse(run.stdout()))).toEqual(withoutTimings(localBoard));
    expect(allPredictions(runDir)).toEqual(allPredictions(join(dir, "local")));
    expect(storeAudit(runDir)).toEqual({ integrity: "ok", folds: TOTAL, distinct: TOTAL });
    console.log(`redis-workers: ${kills} worker kills; run ${(disturbedMs / 1000).toFixed(1)} s against ${(undisturbedMs / 1000).toFixed(1)} s undisturbed (ratio ${(disturbedMs / undisturbedMs).toFixed(2)})`);
  }, 120_000);

  it("records a fit that throws on a worker as a failed trial with its message, like a local run, and the worker serves the rest", async () => {
    const plan = writeRepeatedColumn(dir);
    const local = track(spawnCli(["run", plan, "--run-dir", join(dir, "throws-local"), "--search-only", "--json"], dir));
    expect(await local.exited, local.output()).toBe(0);
    const localRows = (JSON.parse(local.stdout()) as Board).rows;
    const failed = localRows.filter((r) => r.status === "failed");
    expect(failed.length).toBeGreaterThan(0);
    expect(localRows.some((r) => r.status === "done")).toBe(true);
    for (const row of failed) expect(row.message).toMatch(/^fold 0: logistic: the design columns are collinear and l2 = 0/);

    const ns = namespace();
    const [worker] = (await startWorkers(url, ns, 1, dir)).map(track);
    const runDir = join(dir, "throws-redis");
    const run = coordinator(plan, runDir, ns);
    expect(await run.exited, run.output()).toBe(0);
    // Same board: the failed trials with the same message, and every other trial done by the same worker.
    expect(withoutTimings(JSON.parse(run.stdout()))).toEqual(withoutTimings(JSON.parse(local.stdout())));
    expect(allPredictions(runDir)).toEqual(allPredictions(join(dir, "throws-local")));
    expect(storeAudit(runDir)).toEqual({ integrity: "ok", folds: 8 * 3, distinct: 8 * 3 });
    expect(worker.child.exitCode).toBeNull();
    expect(worker.output()).not.toMatch(/error|refused/i);
  });

  it("stops a run whose jobs a worker of another version refuses, with the versions and what to do, and resumes it once the workers agree", async () => {
    const ns = namespace();
    const connection = queueConnection(redisEndpoint(url));
    // A worker one job schema behind: it sees this coordinator's jobs as one schema ahead of its own.
    const older = new Worker(
      JOB_QUEUE,
      async (job: Job) => {
        try {
          acceptJob({ ...job.data, schema: job.data.schema + 1 });
        } catch (error) {
          if (error instanceof RefusedJob) throw new UnrecoverableError(`${error.message} (worker older-box-1)`);
          throw error;
        }
        throw new Error("the older worker accepted a job of a newer schema");
      },
      { connection, prefix: ns },
    );
    const small = writePlan(dir, PLAN.replace(`budget: { trials: ${TRIALS} }`, "budget: { trials: 3 }"), "refused.plan.yaml");
    let stoppedMs = 0;
    const runDir = join(dir, "refused");
    try {
      await older.waitUntilReady();
      const start = Date.now();
      const run = coordinator(small, runDir, ns);
      expect(await run.exited).toBe(2);
      stoppedMs = Date.now() - start;
      expect(run.stdout()).toBe("");
      expect(run.output()).toMatch(
        /nightshift: nightshift run --redis: a worker refused this run's jobs: versions differ: job schema 2 is newer than this worker's 1 \(the coordinator that queued it runs a newer nightshift\): update nightshift on this worker's box \(worker older-box-1\)\. Nothing was stored for the refused jobs; once every worker runs this coordinator's version, run the same command again to resume\n/,
      );
    } finally {
      await older.close();
    }
    // Nothing stored for the refused jobs, no trial marked failed.
    const store = RunStore.open(runDir, { readonly: true });
    try {
      expect(store.foldScores()).toEqual([]);
      expect(store.trials().map((t) => t.status).filter((s) => s === "failed")).toEqual([]);
    } finally {
      store.close();
    }
    // The box is updated: a worker of this version serves the same command, which ends as a local run does.
    track((await startWorkers(url, ns, 1, dir))[0]);
    const resumed = coordinator(small, runDir, ns);
    expect(await resumed.exited, resumed.output()).toBe(0);
    const local = track(spawnCli(["run", small, "--run-dir", join(dir, "refused-local"), "--search-only", "--json"], dir));
    expect(await local.exited).toBe(0);
    expect(withoutTimings(JSON.parse(resumed.stdout()))).toEqual(withoutTimings(JSON.parse(local.stdout())));
    expect(storeAudit(runDir)).toEqual({ integrity: "ok", folds: 3 * FOLDS, distinct: 3 * FOLDS });
    console.log(`redis-workers: a run whose jobs an older worker refuses stops after ${(stoppedMs / 1000).toFixed(1)} s (from the coordinator's start)`);
  });
});
