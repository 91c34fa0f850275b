import { join } from "node:path";
import { createRng } from "@nightshift/core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { allPredictions, tempDir, withoutTimings, writePlan, writeSmallTurbines } from "../e2e/helpers.js";
import { dropNamespace, findRedis, type Spawned, spawnCli, startWorkers, stopAll, testNamespace } from "../redis/redis-fixture.js";
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

describe.skipIf(redis === null)("workers killed and started during a Redis run", () => {
  const url = redis?.url ?? "";
  const dir = tempDir("redis-workers");
  const namespaces: string[] = [];
  const processes: Spawned[] = [];
  let planPath = "";
  let localBoard: Board;

  const namespace = (): string => {
    const ns = testNamespace();
    namespaces.push(ns);
    return ns;
  };
  const track = (p: Spawned): Spawned => {
    processes.push(p);
    return p;
  };
  const coordinator = (plan: string, runDir: string, ns: string): Spawned => track(spawnCli(["run", plan, "--run-dir", runDir, "--redis", url, "--namespace", ns, "--search-only", "--json"], dir));

  beforeAll(async () => {
    writeSmallTurbines(dir, 60, 20);
    planPath = writePlan(dir, PLAN);
    const local = track(spawnCli(["run", planPath, "--run-dir", join(dir, "local"), "--search-only", "--json"], dir));
    expect(await local.exited, local.output()).toBe(0);
    localBoard = JSON.parse(local.stdout());
  });

  afterAll(async () => {
    await stopAll(processes);
    for (const ns of namespaces) await dropNamespace(url, ns).catch(() => undefined);
    await redis?.stop();
  });

  it(`ends with the local run's board and predictions after ${KILLS} SIGKILLs of random workers at seeded moments, new workers started each time`, async () => {
    // The undisturbed run of the same plan on two workers, for the time it takes.
    const calm = namespace();
    const calmWorkers = (await startWorkers(url, calm, 2, dir)).map(track);
    let started = Date.now();
    const undisturbed = coordinator(planPath, join(dir, "undisturbed"), calm);
    expect(await undisturbed.exited, undisturbed.output()).toBe(0);
    const undisturbedMs = Date.now() - started;
    await stopAll(calmWorkers);
    expect(withoutTimings(JSON.parse(undisturbed.stdout()))).toEqual(withoutTimings(localBoard));

    const ns = namespace();
    const live = (await startWorkers(url, ns, 2, dir)).map(track);
    const rng = createRng("redis-workers", 2026);
    // Kill moments at seeded fractions of the undisturbed run's time: the disturbed run lasts longer.
    const schedule = Array.from({ length: KILLS }, () => ({ at: (0.05 + 0.9 * rng.next()) * undisturbedMs, victim: rng.int(1000) })).sort((a, b) => a.at - b.at);
    const runDir = join(dir, "disturbed");
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
});
