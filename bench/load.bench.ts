/**
 * Load: a run of 2,000 trials (k = 3, so 6,000 fold jobs) of a trivial learner on the demo
 * turbine set (invented data, 400 turbines × 50 weeks), run by the command line as a child
 * process whose resident memory (VmRSS in /proc/<pid>/status) is sampled through the run.
 *
 *   npm run build && npx tsx bench/load.bench.ts [--trials N] [--workers N]
 *   npm run build && npx tsx bench/load.bench.ts --redis [--trials N] [--workers N]
 *
 * With --redis the same load goes through a private redis-server (no persistence; needs
 * redis-server on PATH) and N `nightshift worker` processes of one thread each (default 2),
 * and Redis' own memory (INFO memory: used_memory) is sampled with the coordinator's RSS,
 * every 200 ms: completed jobs are removed once committed, so it should stay flat.
 *
 * Prints the wall time, the peaks, and the figures at 10, 25, 50, 75 and 100 % of the fold
 * jobs (the growth from 10 % to the end: bounded memory keeps it near zero). Figures go to
 * docs/RELIABILITY.md ("Crashes, disk, HTTP and load") and docs/BENCHMARKS.md.
 */
import { spawn } from "node:child_process";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import { parseArgs } from "node:util";
import { Redis } from "ioredis";
import { storedFolds, writeSmallTurbines } from "../test/e2e/helpers.js";
import { freePort, startBenchWorkers } from "./lib/redis-workers.js";

const here = dirname(fileURLToPath(import.meta.url));
const CLI = join(here, "../packages/cli/bin/nightshift.js");
const { values } = parseArgs({ options: { trials: { type: "string", default: "2000" }, workers: { type: "string" }, redis: { type: "boolean", default: false } } });
const trials = Number(values.trials);
const FOLDS = 3;

const dir = mkdtempSync(join(tmpdir(), "nightshift-load-"));
writeSmallTurbines(dir, 400, 50);
writeFileSync(
  join(dir, "load.plan.yaml"),
  `name: load
seed: 7
data: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id], holdout: 0.2 }
metric: average_precision
folds: { k: ${FOLDS} }
budget: { trials: ${trials} }
families:
  tree: { depth: 1 }
`,
);
const runDir = join(dir, "run");

function rssKiB(pid: number): number | undefined {
  try {
    const match = /VmRSS:\s+(\d+) kB/.exec(readFileSync(`/proc/${pid}/status`, "utf8"));
    return match ? Number(match[1]) : undefined;
  } catch {
    return undefined;
  }
}

/** A private redis-server and its `nightshift worker` processes, or nothing in local mode. */
async function startRedisSide(workers: number): Promise<{ args: string[]; usedMemory: () => Promise<number>; stop: () => void } | undefined> {
  if (!values.redis) return undefined;
  const port = await freePort();
  const server = spawn("redis-server", ["--port", String(port), "--bind", "127.0.0.1", "--dir", dir, "--save", "", "--appendonly", "no"], { stdio: "ignore" });
  const url = `redis://127.0.0.1:${port}`;
  const client = new Redis(url);
  client.on("error", () => undefined);
  await client.ping();
  const spawned = await startBenchWorkers(url, "load", workers, dir);
  return {
    args: ["--redis", url, "--namespace", "load"],
    async usedMemory() {
      const info = await client.info("memory");
      return Number(/^used_memory:(\d+)/m.exec(info)?.[1] ?? Number.NaN) / 1024;
    },
    stop() {
      for (const w of spawned) w.kill("SIGKILL");
      client.disconnect();
      server.kill("SIGKILL");
    },
  };
}

const redisSide = await startRedisSide(Number(values.workers ?? 2));
const started = performance.now();
const child = spawn(process.execPath, [CLI, "run", "load.plan.yaml", "--run-dir", runDir, ...(redisSide ? redisSide.args : ["--workers", values.workers ?? "1"]), "--search-only", "--quiet"], {
  cwd: dir,
  stdio: ["ignore", "ignore", "inherit"],
});
const exited = new Promise<number | null>((resolve) => child.on("exit", (code) => resolve(code)));
let done = false;
void exited.then(() => {
  done = true;
});

const total = trials * FOLDS;
/** Memory figures in KiB: the coordinator's RSS and, with --redis, Redis' used_memory. */
const samples: Array<{ at: number; jobs: number; rss: number; redis: number }> = [];
let lastJobsCheck = 0;
let jobs = 0;
while (!done) {
  const rss = rssKiB(child.pid ?? -1);
  const redis = redisSide ? await redisSide.usedMemory() : Number.NaN;
  const now = performance.now();
  // Reading the store is cheap but not free: once a second.
  if (now - lastJobsCheck > 1000) {
    jobs = storedFolds(runDir);
    lastJobsCheck = now;
  }
  if (rss !== undefined) samples.push({ at: (now - started) / 1000, jobs, rss, redis });
  await new Promise((r) => setTimeout(r, 200));
}
const code = await exited;
const seconds = (performance.now() - started) / 1000;
const finalJobs = storedFolds(runDir);
const redisAfter = redisSide ? await redisSide.usedMemory() : Number.NaN;
redisSide?.stop();
const mb = (kib: number) => (kib / 1024).toFixed(1);
console.log(`${redisSide ? `Redis mode, ${values.workers ?? 2} worker process(es)` : "local mode"}: exit ${code}; ${finalJobs} of ${total} fold jobs stored; ${seconds.toFixed(1)} s wall; ${samples.length} samples`);
const figures: Array<[string, (s: (typeof samples)[number]) => number]> = [["coordinator RSS", (s) => s.rss]];
if (redisSide) figures.push(["Redis used_memory", (s) => s.redis]);
for (const [name, of] of figures) {
  const at = [0.1, 0.25, 0.5, 0.75].map((q) => {
    const s = samples.find((x) => x.jobs >= total * q);
    return s ? `${q * 100} % ${mb(of(s))}` : `${q * 100} % ?`;
  });
  const tenth = samples.find((x) => x.jobs >= total / 10);
  const last = samples.at(-1);
  console.log(`${name} (MiB): peak ${mb(Math.max(...samples.map(of)))}; at ${at.join(", ")}, 100 % ${last ? mb(of(last)) : "?"}; growth from 10 % to the end ${tenth && last ? mb(of(last) - of(tenth)) : "?"}`);
}
if (redisSide) console.log(`Redis used_memory after the run: ${mb(redisAfter)} MiB`);
console.log(`run folder: ${runDir}`);
