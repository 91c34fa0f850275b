import { join } from "node:path";
import { FoldResultSchema, foldJobId, JOB_SCHEMA_VERSION, JobResultSchema, NODE_MAJOR } from "@nightshift/core";
import { RunStore } from "@nightshift/store";
import { JOB_QUEUE, queueConnection, redisEndpoint } from "@nightshift/worker";
import { Queue, QueueEvents } from "bullmq";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { tempDir, withoutTimings, writePlan, writeSmallTurbines } from "../e2e/helpers.js";
import {
  allPredictions,
  findRedis,
  redisSession,
  hasRedisServer,
  type Spawned,
  spawnCli,
  startRedisServer,
  startWorkers,
  storedFolds,
  until,
} from "./redis-fixture.js";

const redis = await findRedis();
const privateServers = hasRedisServer() || process.env.CI === "true";

// Fits of a few tenths of a second, so a kill lands while jobs are in flight.
const PLAN = `name: recovery
seed: 3
data: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id], holdout: 0.2 }
metric: average_precision
folds: { k: 3 }
budget: { trials: 4 }
families:
  forest: { trees: { int: [80, 120] }, depth: { choice: [8, 12] } }
  boosted: { rounds: { int: [80, 120] }, learning_rate: 0.1, leaves: 16, min_leaf: 5 }
`;
const JOBS = 4 * 3;

describe.skipIf(redis === null)("distributed mode recovers from failures", () => {
  const url = redis?.url ?? "";
  const dir = tempDir("redis-recovery");
  const { namespace, track, cleanup } = redisSession(url);
  let planPath = "";
  let localBoard: { rows: Array<Record<string, unknown>> };

  const boardOf = (p: Spawned): { run: string; rows: Array<Record<string, unknown>> } => JSON.parse(p.stdout());
  const coordinator = (runDir: string, redisUrl: string, ns: string): Spawned => track(spawnCli(["run", planPath, "--run-dir", runDir, "--redis", redisUrl, "--namespace", ns, "--json"], dir));

  beforeAll(async () => {
    writeSmallTurbines(dir, 60, 20);
    planPath = writePlan(dir, PLAN);
    const local = track(spawnCli(["run", planPath, "--run-dir", join(dir, "local"), "--json"], dir));
    expect(await local.exited).toBe(0);
    localBoard = boardOf(local);
  });

  afterAll(async () => {
    await cleanup();
    await redis?.stop();
  });

  it("finishes the job of a worker killed with SIGKILL mid-job on another worker, with the local run's result", async () => {
    const ns = namespace();
    const [victim, ...others] = (await startWorkers(url, ns, 2, dir)).map(track);
    const connection = queueConnection(redisEndpoint(url));
    const queue = new Queue(JOB_QUEUE, { connection, prefix: ns });
    const events = new QueueEvents(JOB_QUEUE, { connection, prefix: ns });
    const stalled = new Set<string>();
    events.on("stalled", ({ jobId }) => stalled.add(jobId));
    let killedJob: string | undefined;
    events.on("active", ({ jobId }) => {
      if (killedJob !== undefined) return;
      void queue.getJob(jobId).then((job) => {
        if (killedJob === undefined && job?.processedBy?.endsWith(`-${victim.pid}`)) {
          killedJob = jobId;
          victim.child.kill("SIGKILL");
        }
      });
    });
    try {
      await events.waitUntilReady();
      const runDir = join(dir, "worker-killed");
      const run = coordinator(runDir, url, ns);
      expect(await run.exited, run.output()).toBe(0);
      expect(await victim.exited).toBeNull();
      expect(killedJob).toBeDefined();
      // The killed job's lock lapsed, it went back to the queue, and another worker did it.
      expect(stalled.has(killedJob as string)).toBe(true);
      expect(others[0].child.exitCode).toBeNull();
      expect(withoutTimings(boardOf(run))).toEqual(withoutTimings(localBoard));
      expect(allPredictions(runDir)).toEqual(allPredictions(join(dir, "local")));
    } finally {
      await events.close();
      await queue.close();
    }
  });

  it("lets a worker stopped with SIGTERM finish its job, or hand it back on a second signal, and exit cleanly", async () => {
    const ns = namespace();
    const [finisher, releaser, stayer] = (await startWorkers(url, ns, 3, dir)).map(track);
    const connection = queueConnection(redisEndpoint(url));
    const queue = new Queue(JOB_QUEUE, { connection, prefix: ns });
    const events = new QueueEvents(JOB_QUEUE, { connection, prefix: ns });
    const stalled = new Set<string>();
    const completedBy = new Map<string, string>();
    events.on("stalled", ({ jobId }) => stalled.add(jobId));
    events.on("completed", ({ jobId, returnvalue }) => completedBy.set(jobId, JobResultSchema.parse(returnvalue).worker));
    const signalled = new Map<Spawned, string>();
    events.on("active", ({ jobId }) => {
      void queue.getJob(jobId).then((job) => {
        // Two different signals: two of the same kind sent at once may arrive as one.
        for (const [worker, signals] of [
          [finisher, ["SIGTERM"]],
          [releaser, ["SIGINT", "SIGTERM"]],
        ] as const) {
          if (signalled.has(worker) || !job?.processedBy?.endsWith(`-${worker.pid}`)) continue;
          signalled.set(worker, jobId);
          for (const signal of signals) worker.child.kill(signal);
        }
      });
    });
    try {
      await events.waitUntilReady();
      const runDir = join(dir, "workers-stopped");
      const run = coordinator(runDir, url, ns);
      expect(await run.exited, run.output()).toBe(0);
      expect(await finisher.exited).toBe(0);
      expect(await releaser.exited).toBe(0);
      expect(stayer.child.exitCode).toBeNull();
      const finished = signalled.get(finisher) as string;
      const released = signalled.get(releaser) as string;
      // The first finished its job itself; the second handed its job back at once, and
      // another worker did it. Neither job waited for a lapsed lock.
      expect(completedBy.get(finished)).toMatch(new RegExp(`-${finisher.pid}$`));
      expect(completedBy.get(released)).not.toMatch(new RegExp(`-${releaser.pid}$`));
      expect(stalled.has(finished) || stalled.has(released)).toBe(false);
      expect(finisher.output()).toContain("stopped");
      expect(releaser.output()).toContain("handing the jobs in progress back to the queue");
      expect(withoutTimings(boardOf(run))).toEqual(withoutTimings(localBoard));
    } finally {
      await events.close();
      await queue.close();
    }
  });

  it("collects the jobs finished while a killed coordinator was down, redoes none, and ends with the local run's result", async () => {
    const ns = namespace();
    (await startWorkers(url, ns, 2, dir)).map(track);
    const queue = new Queue(JOB_QUEUE, { connection: queueConnection(redisEndpoint(url)), prefix: ns });
    try {
      const runDir = join(dir, "coordinator-killed");
      const first = coordinator(runDir, url, ns);
      await until("some folds are committed", () => storedFolds(runDir) >= 3);
      first.child.kill("SIGKILL");
      expect(await first.exited).toBeNull();
      const before = storedFolds(runDir);
      expect(before).toBeLessThan(JOBS);

      // The workers finish what was queued; those results wait in Redis for the next coordinator.
      await until("the queued jobs are done", async () => {
        const counts = await queue.getJobCounts("waiting", "active", "delayed", "completed");
        return counts.waiting + counts.active + counts.delayed === 0 && counts.completed > 0;
      });
      const waitingInRedis = new Map<string, number>();
      for (const job of await queue.getJobs(["completed"])) {
        const result = FoldResultSchema.parse(job.returnvalue);
        waitingInRedis.set(`${result.trial}/${result.fold}`, result.fitSeconds);
      }

      const second = coordinator(runDir, url, ns);
      expect(await second.exited, second.output()).toBe(0);
      expect(withoutTimings(boardOf(second))).toEqual(withoutTimings(localBoard));
      expect(allPredictions(runDir)).toEqual(allPredictions(join(dir, "local")));

      const store = RunStore.open(runDir, { readonly: true });
      try {
        const results = store.foldScores();
        expect(results.length).toBe(JOBS);
        // Each collected result is the one the workers made while no coordinator ran
        // (a redone fit would have its own timing), and every fold was committed once.
        for (const [key, fitSeconds] of waitingInRedis) {
          const [trial, fold] = key.split("/").map(Number);
          expect(results.find((r) => r.trial === trial && r.fold === fold)?.fitSeconds, key).toBe(fitSeconds);
        }
        expect(store.events().filter((e) => e.kind === "fold_done").length).toBe(JOBS);
      } finally {
        store.close();
      }
      expect(await queue.getJobCounts("waiting", "active", "completed", "failed")).toEqual({ waiting: 0, active: 0, completed: 0, failed: 0 });
    } finally {
      await queue.close();
    }
  });

  it("drops a finished job its killed predecessor left in Redis, also when the resume has nothing left to run", async () => {
    // A coordinator killed between committing a fold's result and removing its job leaves the
    // job behind; if that was the last fold, the resume runs no job at all.
    const ns = namespace();
    (await startWorkers(url, ns, 1, dir)).map(track);
    const runDir = join(dir, "leftover");
    const first = coordinator(runDir, url, ns);
    expect(await first.exited, first.output()).toBe(0);
    const runId = boardOf(first).run as string;
    const queue = new Queue(JOB_QUEUE, { connection: queueConnection(redisEndpoint(url)), prefix: ns });
    try {
      // Stands in for the left-behind job: one of this run's job ids, finished (refused at once, so it fails).
      await queue.add("fold", { schema: JOB_SCHEMA_VERSION, node: NODE_MAJOR, run: runId, dataset: "0".repeat(64), seed: 3, trial: 0, fold: 0, family: "shell", params: {}, timeoutSeconds: null }, { jobId: foldJobId(runId, 0, 0) });
      await until("the stand-in is finished", async () => (await queue.getJobCounts("failed")).failed === 1);
      const second = coordinator(runDir, url, ns);
      expect(await second.exited, second.output()).toBe(0);
      expect(withoutTimings(boardOf(second))).toEqual(withoutTimings(localBoard));
      expect(await queue.getJobCounts("waiting", "active", "completed", "failed")).toEqual({ waiting: 0, active: 0, completed: 0, failed: 0 });
    } finally {
      await queue.close();
    }
  });

  it.skipIf(!privateServers)("recovers from a Redis restarted empty mid-run and ends with the local run's result", async () => {
    const server = await startRedisServer();
    try {
      const ns = namespace();
      (await startWorkers(server.url, ns, 2, dir)).map(track);
      const runDir = join(dir, "redis-restarted");
      const run = coordinator(runDir, server.url, ns);
      await until("some folds are committed", () => storedFolds(runDir) >= 3);
      await server.restartEmpty();
      const restarted = { time: Date.now(), folds: storedFolds(runDir) };
      // Time from the empty restart to the next committed fold result (for docs/RELIABILITY.md).
      await until("a fold is committed after the restart", () => storedFolds(runDir) > restarted.folds || run.child.exitCode !== null);
      console.log(`redis-restarted-empty: first fold committed ${Date.now() - restarted.time} ms after the restart`);
      expect(await run.exited, run.output()).toBe(0);
      expect(run.output()).toContain("Redis lost this run's data");
      expect(withoutTimings(boardOf(run))).toEqual(withoutTimings(localBoard));
      expect(allPredictions(runDir)).toEqual(allPredictions(join(dir, "local")));
    } finally {
      await server.stop();
    }
  });
});
