import { mkdtempSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { RunStore } from "@nightshift/store";
import { JOB_QUEUE, queueConnection, redisEndpoint, watchRedis } from "@nightshift/worker";
import { Queue, QueueEvents } from "bullmq";
import { Redis } from "ioredis";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { tempDir, withoutTimings, writePlan, writeSmallTurbines } from "../e2e/helpers.js";
import { allPredictions, hasRedisServer, type RedisServer, type Spawned, spawnCli, startRedisServer, startWorkers, stopAll, storedFolds, testNamespace, until } from "../redis/redis-fixture.js";

/**
 * Redis unreachable for 30 s in the middle of a distributed run, for real: a private
 * redis-server is either frozen (SIGSTOP: connections stay open, nothing answers) or shut
 * down saving its data and started again from it 30 s later (connections refused
 * meanwhile). The coordinator and two workers must wait it out without exiting, say so
 * on stderr, and end with the local run's board and stored predictions: nothing lost,
 * nothing stored twice. The workers' locks lapse meanwhile, so the jobs in flight are
 * redone; a third test makes that the lapse after which BullMQ gives up on a job (as on a
 * worker that keeps dying), which the coordinator must queue again, not record as failed.
 */

const OUTAGE_MS = 30_000;
const TRIALS = 6;
const FOLDS = 3;
const JOBS = TRIALS * FOLDS;

// Fits of a few tenths of a second, so jobs are in flight when Redis goes away; the
// workers' 2 s locks (startWorkers) lapse during the outage, the harshest case.
const PLAN = `name: redis-outage
seed: 5
data: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id], holdout: 0.2 }
metric: average_precision
folds: { k: ${FOLDS} }
budget: { trials: ${TRIALS} }
families:
  forest: { trees: { int: [80, 120] }, depth: { choice: [8, 12] } }
  boosted: { rounds: { int: [80, 120] }, learning_rate: 0.1, leaves: 16, min_leaf: 5 }
`;

const privateServers = hasRedisServer() || process.env.CI === "true";
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

describe.skipIf(!privateServers)("a Redis unreachable for 30 s mid-run loses nothing", () => {
  const dir = tempDir("redis-outage");
  const processes: Spawned[] = [];
  const servers: RedisServer[] = [];
  const frozen = new Set<number>();
  let planPath = "";
  let localBoard: { rows: Array<Record<string, unknown>> };

  const track = (p: Spawned): Spawned => {
    processes.push(p);
    return p;
  };

  beforeAll(async () => {
    writeSmallTurbines(dir, 60, 20);
    planPath = writePlan(dir, PLAN);
    const local = track(spawnCli(["run", planPath, "--run-dir", join(dir, "local"), "--json"], dir));
    expect(await local.exited, local.output()).toBe(0);
    localBoard = JSON.parse(local.stdout());
  });

  afterAll(async () => {
    await stopAll(processes);
    // A test that failed mid-outage leaves its server frozen: it is woken, then stopped.
    for (const pid of frozen) process.kill(pid, "SIGCONT");
    for (const server of servers) await server.stop();
  });

  /**
   * Runs the plan on a private Redis, breaks it after a few committed folds, mends it
   * `seconds` later; returns the seconds from mending to the next committed fold. With
   * `earlierLapses`, the queued jobs are marked as stalled that often before (as if their
   * locks had lapsed in earlier outages), so this outage is the one after which BullMQ gives up on them.
   */
  async function runThrough(kind: "hang" | "down", { seconds = OUTAGE_MS / 1000, earlierLapses = 0 } = {}): Promise<number> {
    const server = await startRedisServer({ dataDir: mkdtempSync(join(dir, `${kind}-data-`)) });
    servers.push(server);
    const ns = testNamespace();
    const workers = (await startWorkers(server.url, ns, 2, dir)).map(track);
    // Jobs whose lock lapsed during the outage go back to the queue ("stalled") and run again.
    const events = new QueueEvents(JOB_QUEUE, { connection: queueConnection(redisEndpoint(server.url)), prefix: ns });
    const stalled = new Set<string>();
    events.on("stalled", ({ jobId }) => stalled.add(jobId));
    events.on("error", () => undefined);
    await events.waitUntilReady();
    const queue = new Queue(JOB_QUEUE, { connection: queueConnection(redisEndpoint(server.url)), prefix: ns });
    queue.on("error", () => undefined);
    const runDir = join(dir, `${kind}-${seconds}s-${earlierLapses}`);
    const run = track(spawnCli(["run", planPath, "--run-dir", runDir, "--redis", server.url, "--namespace", ns, "--json"], dir));
    await until("a few folds are committed", () => storedFolds(runDir) >= 3);
    if (earlierLapses > 0) {
      const client = new Redis(server.url);
      // "stc" is the stalled counter BullMQ keeps in a job's hash.
      for (const job of await queue.getJobs(["active", "waiting"])) await client.hset(queue.toKey(job.id as string), "stc", earlierLapses);
      client.disconnect();
    }

    if (kind === "hang") {
      frozen.add(server.pid);
      process.kill(server.pid, "SIGSTOP");
    }
    else await server.shutdownSaving();
    const atOutage = storedFolds(runDir);
    expect(atOutage, "the outage lands mid-run").toBeLessThan(JOBS);
    await sleep(seconds * 1000);

    // Nobody gave up or crashed meanwhile, and everybody said what is going on.
    for (const p of [run, ...workers]) expect(p.child.exitCode, p.output()).toBeNull();
    expect(run.output()).toMatch(new RegExp(`nightshift: Redis at 127\\.0\\.0\\.1:${server.port} unreachable since \\d\\d:\\d\\d:\\d\\d \\([^)]+\\), retrying \\(next try in \\d+ s\\)`));
    for (const w of workers) expect(w.output()).toMatch(new RegExp(`nightshift worker: Redis at 127\\.0\\.0\\.1:${server.port} unreachable since`));
    const committedDuringOutage = storedFolds(runDir);

    if (kind === "hang") {
      process.kill(server.pid, "SIGCONT");
      frozen.delete(server.pid);
    }
    else await server.start();
    const back = Date.now();
    await until("a fold is committed after the outage", () => storedFolds(runDir) > committedDuringOutage || run.child.exitCode !== null, 120);
    const recoverSeconds = (Date.now() - back) / 1000;

    expect(await run.exited, run.output()).toBe(0);
    await until("the workers say Redis is back", () => workers.every((w) => /nightshift worker: Redis at \S+ reachable again after \d+ s/.test(w.output())), 20);
    expect(run.output()).toMatch(/nightshift: Redis at \S+ reachable again after \d+ s/);
    // --json keeps stdout for the board: every message went to stderr.
    const board = JSON.parse(run.stdout());
    expect(withoutTimings(board)).toEqual(withoutTimings(localBoard));
    expect(allPredictions(runDir)).toEqual(allPredictions(join(dir, "local")));

    const store = RunStore.open(runDir, { readonly: true });
    try {
      expect(store.foldScores().length).toBe(JOBS);
      // Each fold committed once, none failed.
      expect(store.events().filter((e) => e.kind === "fold_done").length).toBe(JOBS);
      expect(store.foldScores().filter((r) => r.error !== null)).toEqual([]);
    } finally {
      store.close();
    }
    // The outage outlasted the workers' locks: the jobs in flight were handed back and redone, their results stored once.
    expect(stalled.size).toBeGreaterThan(0);
    await events.close();
    if (earlierLapses > 0) expect(run.output()).toMatch(/its locks lapsed while Redis was unreachable .*; queued again/);
    // Every job was removed from Redis once committed.
    try {
      expect(await queue.getJobCounts("waiting", "active", "delayed", "completed", "failed")).toEqual({ waiting: 0, active: 0, delayed: 0, completed: 0, failed: 0 });
    } finally {
      await queue.close();
    }
    for (const w of workers) expect(w.child.exitCode, w.output()).toBeNull();
    if (process.env.OUTAGE_DEBUG) writeFileSync(`${process.env.OUTAGE_DEBUG}-${kind}-${earlierLapses}.log`, [run.output(), ...workers.map((w) => w.output())].join("\n----\n"));
    await stopAll(workers);
    console.log(`redis outage (${kind}, ${seconds} s, ${earlierLapses} earlier lapses): ${atOutage} of ${JOBS} folds committed before; first fold committed ${recoverSeconds.toFixed(1)} s after Redis was back; ${stalled.size} job(s) redone after their lock lapsed`);
    await server.stop();
    return recoverSeconds;
  }

  it("tells at once that Redis refuses connections, with since when and the next try, and when it answers again", async () => {
    const server = await startRedisServer();
    servers.push(server);
    await server.stop();
    const told: string[] = [];
    const changes: Array<Date | null> = [];
    const watch = watchRedis(redisEndpoint(server.url), (line) => told.push(line), (since) => changes.push(since));
    try {
      await until("the watch tells the outage", () => told.length > 0, 10);
      expect(told[0]).toMatch(new RegExp(`^Redis at 127\\.0\\.0\\.1:${server.port} unreachable since \\d\\d:\\d\\d:\\d\\d \\(connection refused\\), retrying \\(next try in 1 s\\)$`));
      expect(watch.reachable).toBe(false);
      await server.start();
      await until("the watch tells Redis is back", () => told.some((line) => /^Redis at \S+ reachable again after \d+ s$/.test(line)), 20);
      expect(watch.reachable).toBe(true);
      expect(changes.map((c) => c === null)).toEqual([false, true]);
    } finally {
      watch.stop();
      await server.stop();
    }
  });

  it("lets a worker started while Redis refuses connections wait for it and serve once it answers; a wrong password still stops it at once", async () => {
    const server = await startRedisServer({ password: "early-secret" });
    servers.push(server);
    await server.stop();
    const ns = testNamespace();
    const worker = track(spawnCli(["worker", "--redis", server.url, "--namespace", ns, "--concurrency", "1", "--cache", join(dir, "cache-early")], dir));
    await until("the worker says it waits", () => /waiting for it \(next try in 2 s/.test(worker.output()), 20);
    expect(worker.output()).toMatch(/connection refused; is Redis running there, and is the port right\?; waiting for it \(next try in 1 s, Ctrl-C to stop\)/);
    expect(worker.child.exitCode).toBeNull();
    await server.start();
    await until("the worker serves", () => worker.output().includes("serving namespace"), 30);
    expect(worker.output()).toMatch(/Redis at \S+ answered after \d+ s/);
    // Waiting cannot mend a refused password: that is one message and exit 2, as before.
    const wrong = spawnCli(["worker", "--redis", server.url.replace("early-secret", "wrong"), "--namespace", ns, "--cache", join(dir, "cache-wrong")], dir);
    expect(await wrong.exited).toBe(2);
    expect(wrong.output()).toMatch(/Redis refused the user name or password/);
    await stopAll([worker]);
    await server.stop();
  });

  it("waits out a hung Redis (SIGSTOP for 30 s) and ends with the local run's board and predictions", async () => {
    await runThrough("hang");
  }, 180_000);

  it("waits out a Redis that refuses connections for 30 s (shut down, restarted with its data) and ends with the local run's board and predictions", async () => {
    await runThrough("down");
  }, 180_000);

  it("queues again, instead of failing, the jobs BullMQ gives up on after their locks lapsed in a third outage", async () => {
    // The workers allow two lapses (a worker dying twice); the third fails a job unless the coordinator knows they were outages.
    await runThrough("hang", { seconds: 10, earlierLapses: 2 });
  }, 120_000);
});
