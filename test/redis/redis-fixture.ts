import { type ChildProcess, spawn, spawnSync } from "node:child_process";
import { randomBytes } from "node:crypto";
import { readFileSync } from "node:fs";
import { createServer } from "node:net";
import { resolve } from "node:path";
import { checkRedis, redisEndpoint } from "@nightshift/worker";
import { Redis } from "ioredis";
import { CLI } from "../e2e/helpers.js";

export { allPredictions, storedFolds } from "../e2e/helpers.js";

/**
 * Redis for the distributed-mode tests: REDIS_URL, else 127.0.0.1:6379, else a
 * redis-server from PATH on a free port. Under CI=true a missing Redis fails the tests
 * (they must run in CI); elsewhere they are skipped.
 */
export interface TestRedis {
  readonly url: string;
  stop(): Promise<void>;
}

async function reachable(url: string): Promise<boolean> {
  try {
    await checkRedis(redisEndpoint(url), "test", 2000);
    return true;
  } catch {
    return false;
  }
}

export function hasRedisServer(): boolean {
  return spawnSync("redis-server", ["--version"], { encoding: "utf8" }).status === 0;
}

export async function findRedis(): Promise<TestRedis | null> {
  for (const url of [process.env.REDIS_URL, "redis://127.0.0.1:6379"]) {
    if (url && (await reachable(url))) return { url, stop: async () => undefined };
  }
  if (hasRedisServer()) return startRedisServer();
  if (process.env.CI === "true") throw new Error("no Redis for the distributed-mode tests: set REDIS_URL, run one on 127.0.0.1:6379, or put redis-server on PATH");
  return null;
}

export async function freePort(): Promise<number> {
  return new Promise((done, fail) => {
    const server = createServer();
    server.on("error", fail);
    server.listen(0, "127.0.0.1", () => {
      const address = server.address();
      server.close(() => (typeof address === "object" && address ? done(address.port) : fail(new Error("no port"))));
    });
  });
}

export interface RedisServer extends TestRedis {
  readonly port: number;
  /** The redis-server process. */
  readonly pid: number;
  /** Kills the server and starts an empty one on the same port (no persistence): Redis restarted empty. */
  restartEmpty(): Promise<void>;
  /** With `dataDir`: saves the data and stops (SHUTDOWN SAVE); connections are refused until `start`. */
  shutdownSaving(): Promise<void>;
  /** Starts the server again on the same port (with `dataDir`, from the data it saved). */
  start(): Promise<void>;
}

const TLS_DIR = resolve(__dirname, "tls");
export const TEST_CA = resolve(TLS_DIR, "test-only.crt");

/**
 * A private redis-server on a free port; `tls` serves rediss:// with the test certificate.
 * No persistence, unless `dataDir`: then `shutdownSaving` writes the data there and `start` reads it back.
 */
export async function startRedisServer(options: { password?: string; tls?: boolean; dataDir?: string } = {}): Promise<RedisServer> {
  const port = await freePort();
  const args = ["--bind", "127.0.0.1", "--save", "", "--appendonly", "no", "--daemonize", "no"];
  if (options.dataDir) args.push("--dir", options.dataDir, "--dbfilename", "outage.rdb");
  if (options.tls) args.push("--port", "0", "--tls-port", String(port), "--tls-cert-file", resolve(TLS_DIR, "test-only.crt"), "--tls-key-file", resolve(TLS_DIR, "test-only.key"), "--tls-auth-clients", "no");
  else args.push("--port", String(port));
  if (options.password) args.push("--requirepass", options.password);
  const auth = options.password ? `:${options.password}@` : "";
  const url = `${options.tls ? "rediss" : "redis"}://${auth}127.0.0.1:${port}`;
  let child: ChildProcess;
  const start = async (): Promise<void> => {
    child = spawn("redis-server", args, { stdio: "ignore" });
    for (let i = 0; i < 100; i++) {
      // The probe trusts the test certificate through a TLS option of its own; the
      // processes under test trust it the way a user would, through NODE_EXTRA_CA_CERTS.
      const client = new Redis({ ...redisEndpoint(url).options, lazyConnect: true, retryStrategy: () => null, maxRetriesPerRequest: 0, ...(options.tls ? { tls: { ca: [readFileSync(TEST_CA, "utf8")] } } : {}) });
      client.on("error", () => undefined);
      try {
        await client.connect();
        await client.ping();
        client.disconnect();
        return;
      } catch {
        client.disconnect();
        await new Promise((r) => setTimeout(r, 50));
      }
    }
    throw new Error(`redis-server did not start on port ${port}`);
  };
  const stop = async (): Promise<void> => {
    if (child.exitCode !== null || child.signalCode !== null) return;
    const exited = new Promise((r) => child.once("exit", r));
    child.kill("SIGKILL");
    await exited;
  };
  await start();
  return {
    url,
    port,
    get pid() {
      return child.pid as number;
    },
    stop,
    async restartEmpty() {
      await stop();
      await start();
    },
    async shutdownSaving() {
      if (!options.dataDir) throw new Error("shutdownSaving needs a dataDir");
      const exited = new Promise((r) => child.once("exit", r));
      const client = new Redis({ ...redisEndpoint(url).options, retryStrategy: () => null, maxRetriesPerRequest: 0 });
      client.on("error", () => undefined);
      // The server closes the connection as it exits, so SHUTDOWN has no reply to wait for.
      await client.shutdown("SAVE").catch(() => undefined);
      client.disconnect();
      await exited;
    },
    start,
  };
}

export function testNamespace(): string {
  return `nightshift-test-${randomBytes(4).toString("hex")}`;
}

/** Deletes every key of a namespace. */
export async function dropNamespace(url: string, namespace: string): Promise<void> {
  const client = new Redis(url);
  try {
    let cursor = "0";
    do {
      const [next, keys] = await client.scan(cursor, "MATCH", `${namespace}:*`, "COUNT", 1000);
      cursor = next;
      if (keys.length > 0) await client.del(...keys);
    } while (cursor !== "0");
  } finally {
    client.disconnect();
  }
}

export interface Spawned {
  readonly child: ChildProcess;
  readonly pid: number;
  /** stdout and stderr, as they came. */
  output(): string;
  stdout(): string;
  /** Resolves with the exit code (null after a signal). */
  readonly exited: Promise<number | null>;
}

export function spawnCli(args: string[], cwd: string, env: NodeJS.ProcessEnv = {}): Spawned {
  const child = spawn(process.execPath, [CLI, ...args], { cwd, stdio: ["ignore", "pipe", "pipe"], env: { ...process.env, NO_COLOR: "1", ...env } });
  let text = "";
  let stdout = "";
  child.stdout?.on("data", (d: Buffer) => {
    text += d.toString();
    stdout += d.toString();
  });
  child.stderr?.on("data", (d: Buffer) => (text += d.toString()));
  // "close", not "exit": every byte of output has arrived by then.
  const exited = new Promise<number | null>((r) => child.on("close", (code) => r(code)));
  return { child, pid: child.pid as number, output: () => text, stdout: () => stdout, exited };
}

/** Waits for a condition, polling; fails with the message after the time limit. */
export async function until(what: string, condition: () => boolean | Promise<boolean>, seconds = 40): Promise<void> {
  const end = Date.now() + seconds * 1000;
  while (!(await condition())) {
    if (Date.now() > end) throw new Error(`timed out waiting until ${what}`);
    await new Promise((r) => setTimeout(r, 50));
  }
}

/** `nightshift worker` processes on a namespace, each ready (serving) when this resolves. */
export async function startWorkers(url: string, namespace: string, count: number, cwd: string, extra: string[] = [], env: NodeJS.ProcessEnv = {}): Promise<Spawned[]> {
  const workers = Array.from({ length: count }, (_, i) =>
    spawnCli(["worker", "--redis", url, "--namespace", namespace, "--concurrency", "1", "--lock-seconds", "2", "--cache", resolve(cwd, `cache-${i}`), ...extra], cwd, env),
  );
  await Promise.all(workers.map((w, i) => until(`worker ${i} serves`, () => w.output().includes("serving namespace"))));
  return workers;
}

export async function stopAll(processes: readonly Spawned[]): Promise<void> {
  await Promise.all(
    processes.map(async (p) => {
      if (p.child.exitCode === null && p.child.signalCode === null) p.child.kill("SIGKILL");
      await p.exited;
    }),
  );
}

/** The namespaces and processes a test file makes on one Redis, all cleaned up at its end. */
export interface RedisSession {
  /** A fresh namespace, dropped at the end. */
  namespace(): string;
  /** A process, killed at the end if it still runs. */
  track(process: Spawned): Spawned;
  /** Kills every tracked process and drops every namespace. */
  cleanup(): Promise<void>;
}

export function redisSession(url: string): RedisSession {
  const namespaces: string[] = [];
  const processes: Spawned[] = [];
  return {
    namespace() {
      const ns = testNamespace();
      namespaces.push(ns);
      return ns;
    },
    track(process) {
      processes.push(process);
      return process;
    },
    async cleanup() {
      await stopAll(processes);
      for (const ns of namespaces) await dropNamespace(url, ns).catch(() => undefined);
    },
  };
}
