import { join } from "node:path";
import { JOB_QUEUE, queueConnection, redisEndpoint } from "@nightshift/worker";
import { Queue } from "bullmq";
import { afterAll, describe, expect, it } from "vitest";
import { soakSeeds } from "./soak.js";
import { allPredictions, nightshift, SMALL_FAMILIES, storedFolds, tempDir, withoutTimings, writePlan, writeSmallTurbines } from "../e2e/helpers.js";
import { dropNamespace, findRedis, type Spawned, spawnCli, startWorkers, stopAll, testNamespace } from "../redis/redis-fixture.js";
import { killAt, killMoments, sleep, storeAudit } from "./kill-moments.js";

const redis = await findRedis();

// 90 fold jobs: a killed coordinator's queued jobs finish on the workers while it is down and
// are collected at once by the next one, so a resume moves further than in local mode.
const TRIALS = 30;
const FOLDS = 3;
const KILLS = 20;
const TOTAL = TRIALS * FOLDS;

const PLAN = `name: redis-crash
seed: 7
data: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id], holdout: 0.2 }
metric: average_precision
folds: { k: ${FOLDS} }
budget: { trials: ${TRIALS} }
${SMALL_FAMILIES}`;

afterAll(async () => {
  await redis?.stop();
});

// One seed; `npm run soak` runs SOAK_FACTOR seeds (each its own 20 kill moments).
describe.skipIf(redis === null).each(soakSeeds(2026))("crash anywhere (Redis mode), seed %i", (seed) => {
  const url = redis?.url ?? "";
  const ns = testNamespace();
  const processes: Spawned[] = [];

  afterAll(async () => {
    await stopAll(processes);
    await dropNamespace(url, ns);
  });

  it(`ends, after ${KILLS} SIGKILLs of the coordinator at seeded-random moments while its workers run on, with the board and predictions of a local run`, async () => {
    const dir = tempDir("redis-crash");
    writeSmallTurbines(dir);
    const planPath = writePlan(dir, PLAN);
    const reference = nightshift(["run", planPath, "--run-dir", join(dir, "local"), "--workers", "1", "--search-only", "--json"], dir);
    expect(reference.code, reference.stderr).toBe(0);

    processes.push(...(await startWorkers(url, ns, 2, dir)));
    const runDir = join(dir, "killed");
    const args = ["run", planPath, "--run-dir", runDir, "--redis", url, "--namespace", ns, "--search-only"];
    let kills = 0;
    // Time from a kill to the next coordinator's first newly committed fold (for the docs).
    const recoveries: number[] = [];
    let killedAt: { time: number; folds: number } | null = null;
    for (const moment of killMoments("redis-crash", seed, TOTAL, KILLS)) {
      const coordinator = spawnCli([...args, "--quiet"], dir);
      processes.push(coordinator);
      if (killedAt) {
        const since = killedAt;
        void (async () => {
          while (coordinator.child.exitCode === null && coordinator.child.signalCode === null && storedFolds(runDir) <= since.folds) await sleep(10);
          if (storedFolds(runDir) > since.folds) recoveries.push(Date.now() - since.time);
        })();
      }
      const outcome = await killAt(coordinator.child, coordinator.exited, runDir, moment, TOTAL);
      if (outcome === "killed") {
        kills += 1;
        killedAt = { time: Date.now(), folds: storedFolds(runDir) };
      } else {
        // A coordinator that finishes before its kill moment must have finished cleanly.
        expect({ code: await coordinator.exited, output: coordinator.output() }).toEqual({ code: 0, output: "" });
        killedAt = null;
      }
    }
    expect(kills).toBeGreaterThanOrEqual(KILLS - 5);

    const last = spawnCli([...args, "--json"], dir);
    processes.push(last);
    expect(await last.exited, last.output()).toBe(0);
    expect(withoutTimings(JSON.parse(last.stdout()))).toEqual(withoutTimings(JSON.parse(reference.stdout)));
    expect(allPredictions(runDir)).toEqual(allPredictions(join(dir, "local")));
    expect(storeAudit(runDir)).toEqual({ integrity: "ok", folds: TOTAL, distinct: TOTAL });

    // Nothing of the run is left in Redis: every job was removed once committed.
    const queue = new Queue(JOB_QUEUE, { connection: queueConnection(redisEndpoint(url)), prefix: ns });
    try {
      expect(await queue.getJobCounts("waiting", "active", "delayed", "completed", "failed")).toEqual({ waiting: 0, active: 0, delayed: 0, completed: 0, failed: 0 });
    } finally {
      await queue.close();
    }
    recoveries.sort((a, b) => a - b);
    console.log(
      `redis-crash: ${kills} of ${KILLS} kills landed in a live run; kill to first new committed fold: median ${recoveries[Math.floor(recoveries.length / 2)]} ms, max ${recoveries.at(-1)} ms over ${recoveries.length} resumes`,
    );
  }, 180_000);
});
