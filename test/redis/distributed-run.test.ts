import { existsSync } from "node:fs";
import { join } from "node:path";
import { NODE_MAJOR } from "@nightshift/core";
import { JOB_QUEUE, redisEndpoint, queueConnection, runKey } from "@nightshift/worker";
import { Queue } from "bullmq";
import { Redis } from "ioredis";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { SMALL_FAMILIES, tempDir, withoutTimings, writePlan, writeSmallTurbines } from "../e2e/helpers.js";
import {
  allPredictions,
  findRedis,
  redisSession,
  hasRedisServer,
  spawnCli,
  startRedisServer,
  startWorkers,
  TEST_CA,
  until,
} from "./redis-fixture.js";

const redis = await findRedis();
const privateServers = hasRedisServer() || process.env.CI === "true";

const PLAN = `name: distributed
seed: 7
data: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id], holdout: 0.2 }
metric: average_precision
folds: { k: 3 }
budget: { trials: 9 }
halving: { eta: 3 }
${SMALL_FAMILIES}`;

describe.skipIf(redis === null)("distributed mode on a real Redis", () => {
  const url = redis?.url ?? "";
  const dir = tempDir("redis-run");
  const { namespace, track, cleanup } = redisSession(url);
  let planPath = "";
  let localBoard: unknown;

  const cli = async (args: string[], env: NodeJS.ProcessEnv = {}): Promise<{ code: number | null; output: string; stdout: string }> => {
    const child = track(spawnCli(args, dir, env));
    const code = await child.exited;
    return { code, output: child.output(), stdout: child.stdout() };
  };

  beforeAll(async () => {
    writeSmallTurbines(dir, 40, 20);
    planPath = writePlan(dir, PLAN);
    const local = await cli(["run", planPath, "--run-dir", join(dir, "local"), "--json"]);
    expect(local.code).toBe(0);
    localBoard = JSON.parse(local.stdout);
  });

  afterAll(async () => {
    await cleanup();
    await redis?.stop();
  });

  it("runs a plan on a coordinator and 3 worker processes with the local run's board and stored predictions", async () => {
    const ns = namespace();
    (await startWorkers(url, ns, 3, dir)).map(track);
    const runDir = join(dir, "distributed");
    const run = await cli(["run", planPath, "--run-dir", runDir, "--redis", url, "--namespace", ns, "--json"]);
    expect(run.code, run.output).toBe(0);
    const board = JSON.parse(run.stdout);
    expect(board.rows.filter((r: { status: string }) => r.status === "pruned").length).toBeGreaterThan(0);
    expect(withoutTimings(board)).toEqual(withoutTimings(localBoard as { rows: Array<Record<string, unknown>> }));
    expect(allPredictions(runDir)).toEqual(allPredictions(join(dir, "local")));

    // Every job was removed once committed, and the run's setup once the run ended.
    const queue = new Queue(JOB_QUEUE, { connection: queueConnection(redisEndpoint(url)), prefix: ns });
    const client = new Redis(url);
    try {
      expect(await queue.getJobCounts("waiting", "active", "delayed", "completed", "failed")).toEqual({ waiting: 0, active: 0, delayed: 0, completed: 0, failed: 0 });
      expect(await client.exists(runKey(ns, board.run))).toBe(0);
    } finally {
      await queue.close();
      client.disconnect();
    }
  });

  it("fails hostile jobs injected into the queue without running them, and the worker goes on serving", async () => {
    const ns = namespace();
    const [worker] = await startWorkers(url, ns, 1, dir);
    track(worker);
    const valid = {
      schema: 1,
      node: NODE_MAJOR,
      run: "hostile-run",
      dataset: "0".repeat(64),
      seed: 1,
      trial: 0,
      fold: 0,
      family: "tree",
      params: { depth: 3 },
      timeoutSeconds: null,
    };
    const hostile: Record<string, { data: unknown; reason: RegExp }> = {
      "unknown-family": { data: { ...valid, family: "shell" }, reason: /family/ },
      "wrong-types": { data: { ...valid, trial: "0", seed: -1 }, reason: /trial.*seed|seed.*trial/s },
      "proto-key": { data: JSON.parse(`{"__proto__": {"polluted": true}, ${JSON.stringify(valid).slice(1)}`), reason: /__proto__/ },
      "proto-param": { data: { ...valid, params: JSON.parse('{"__proto__": {"depth": 1}}') }, reason: /params/ },
      "extra-field": { data: { ...valid, code: "process.exit(1)" }, reason: /code/ },
      "out-of-range": { data: { ...valid, params: { depth: -3 } }, reason: /tree\.depth/ },
      "other-node": { data: { ...valid, node: NODE_MAJOR + 1 }, reason: /Node\.js/ },
      // What a worker sees from a coordinator of a newer or older nightshift: both versions, and which box to update.
      "newer-schema": { data: { ...valid, schema: 2 }, reason: /^refused: versions differ: job schema 2 is newer than this worker's 1 .*: update nightshift on this worker's box \(worker [^)]+\)$/ },
      "older-schema": { data: { ...valid, schema: 0 }, reason: /^refused: versions differ: job schema 0 is older than this worker's 1 .*: update nightshift where the coordinator runs/ },
    };
    const queue = new Queue(JOB_QUEUE, { connection: queueConnection(redisEndpoint(url)), prefix: ns });
    try {
      for (const [id, { data }] of Object.entries(hostile)) await queue.add("fold", data, { jobId: id, attempts: 3, backoff: { type: "fixed", delay: 100 } });
      await until("every hostile job is failed", async () => (await queue.getJobCounts("failed")).failed === Object.keys(hostile).length);
      for (const [id, { reason }] of Object.entries(hostile)) {
        const job = await queue.getJob(id);
        expect(job?.failedReason, id).toMatch(/^refused: /);
        expect(job?.failedReason, id).toMatch(reason);
        // Refused at once: no retry, no result.
        expect(job?.attemptsMade, id).toBe(1);
        expect(job?.returnvalue ?? null, id).toBeNull();
      }
    } finally {
      await queue.close();
    }
    expect(worker.child.exitCode).toBeNull();

    // The same worker then serves a real run.
    const small = writePlan(dir, PLAN.replace("budget: { trials: 9 }\nhalving: { eta: 3 }", "budget: { trials: 2 }"), "after-hostile.plan.yaml");
    const run = await cli(["run", small, "--run-dir", join(dir, "after-hostile"), "--redis", url, "--namespace", ns, "--json"]);
    expect(run.code, run.output).toBe(0);
    expect(JSON.parse(run.stdout).rows.every((r: { status: string }) => r.status === "done")).toBe(true);
  });

  it("stops a fit over its time limit on the worker, records it as timed out, and the worker goes on", async () => {
    const ns = namespace();
    const [worker] = await startWorkers(url, ns, 1, dir);
    track(worker);
    // 0.01 minutes over 3 folds: 0.2 s per fold, far less than 5000 unpruned trees need.
    const slow = writePlan(
      dir,
      PLAN.replace("budget: { trials: 9 }\nhalving: { eta: 3 }", "budget: { trials: 2, trial_minutes: 0.01 }").replace(/families:[\s\S]*$/, "families:\n  forest: { trees: 5000, depth: { choice: [null] } }\n"),
      "time-limit.plan.yaml",
    );
    const run = await cli(["run", slow, "--run-dir", join(dir, "time-limit"), "--redis", url, "--namespace", ns, "--json"]);
    expect(run.code, run.output).toBe(0);
    expect(JSON.parse(run.stdout).rows.map((r: { status: string }) => r.status)).toEqual(["timed_out", "timed_out"]);
    expect(worker.child.exitCode).toBeNull();
  });

  it.skipIf(!privateServers)("says clearly that a Redis password is wrong or missing, before the run folder is made", async () => {
    const server = await startRedisServer({ password: "night-secret" });
    try {
      const wrong = server.url.replace("night-secret", "not-it");
      const runDir = join(dir, "wrong-password");
      const run = await cli(["run", planPath, "--run-dir", runDir, "--redis", wrong]);
      expect(run.code).toBe(2);
      expect(run.output).toMatch(/nightshift run --redis: redis:\/\/:\*\*\*@127\.0\.0\.1:\d+: Redis refused the user name or password in the URL/);
      expect(run.output).not.toContain("not-it");
      expect(existsSync(runDir)).toBe(false);

      const worker = await cli(["worker", "--redis", wrong]);
      expect(worker.code).toBe(2);
      expect(worker.output).toMatch(/Redis refused the user name or password/);

      const none = await cli(["worker", "--redis", `redis://127.0.0.1:${server.port}`]);
      expect(none.code).toBe(2);
      expect(none.output).toMatch(/this Redis needs a password; put it in the URL/);
    } finally {
      await server.stop();
    }
  });

  it.skipIf(!privateServers)("runs over TLS (rediss://) with a password, trusting a private certificate authority", async () => {
    const server = await startRedisServer({ password: "tls-secret", tls: true });
    try {
      const untrusted = await cli(["worker", "--redis", server.url]);
      expect(untrusted.code).toBe(2);
      expect(untrusted.output).toMatch(/TLS failed .*NODE_EXTRA_CA_CERTS/);

      const ns = namespace();
      const trust = { NODE_EXTRA_CA_CERTS: TEST_CA };
      (await startWorkers(server.url, ns, 1, dir, [], trust)).map(track);
      const small = writePlan(dir, PLAN.replace("budget: { trials: 9 }\nhalving: { eta: 3 }", "budget: { trials: 2 }"), "tls.plan.yaml");
      const run = await cli(["run", small, "--run-dir", join(dir, "tls"), "--redis", server.url, "--namespace", ns, "--json"], trust);
      expect(run.code, run.output).toBe(0);
      expect(JSON.parse(run.stdout).rows.map((r: { status: string }) => r.status)).toEqual(["done", "done"]);
    } finally {
      await server.stop();
    }
  });
});
