/**
 * Load: a run of 2,000 trials (k = 3, so 6,000 fold jobs) of a trivial learner on the demo
 * turbine set (invented data, 400 turbines × 50 weeks), run by the command line as a child
 * process whose resident memory (VmRSS in /proc/<pid>/status) is sampled through the run.
 *
 *   npm run build && npx tsx bench/load.bench.ts [--trials N] [--workers N]
 *
 * Prints the wall time, the peak RSS, and the RSS at 10 % of the fold jobs against the RSS at the
 * end (the growth over 90 % of the run: bounded memory keeps it near zero). Figures go to
 * docs/RELIABILITY.md ("Crashes, disk, HTTP and load") and docs/BENCHMARKS.md.
 */
import { spawn } from "node:child_process";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import { parseArgs } from "node:util";
import { stringify } from "csv-stringify/sync";
import { generateTurbineRows, TURBINE_COLUMNS } from "../packages/cli/src/demo/turbine-data.js";
import { RunStore } from "../packages/store/src/index.js";

const here = dirname(fileURLToPath(import.meta.url));
const CLI = join(here, "../packages/cli/bin/nightshift.js");
const { values } = parseArgs({ options: { trials: { type: "string", default: "2000" }, workers: { type: "string", default: "1" } } });
const trials = Number(values.trials);
const FOLDS = 3;

const dir = mkdtempSync(join(tmpdir(), "nightshift-load-"));
writeFileSync(join(dir, "turbines.csv"), stringify(generateTurbineRows({ turbines: 400, weeks: 50, seed: 11 }), { header: true, columns: [...TURBINE_COLUMNS] }));
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

function committed(): number {
  try {
    const store = RunStore.open(runDir, { readonly: true });
    try {
      return store.foldScores().length;
    } finally {
      store.close();
    }
  } catch {
    return 0;
  }
}

const started = performance.now();
const child = spawn(process.execPath, [CLI, "run", "load.plan.yaml", "--run-dir", runDir, "--workers", values.workers ?? "1", "--search-only", "--quiet"], { cwd: dir, stdio: ["ignore", "ignore", "inherit"] });
const exited = new Promise<number | null>((resolve) => child.on("exit", (code) => resolve(code)));
let done = false;
void exited.then(() => {
  done = true;
});

const total = trials * FOLDS;
const samples: Array<{ at: number; jobs: number; rss: number }> = [];
let lastJobsCheck = 0;
let jobs = 0;
while (!done) {
  const rss = rssKiB(child.pid ?? -1);
  const now = performance.now();
  // Reading the store is cheap but not free: once a second.
  if (now - lastJobsCheck > 1000) {
    jobs = committed();
    lastJobsCheck = now;
  }
  if (rss !== undefined) samples.push({ at: (now - started) / 1000, jobs, rss });
  await new Promise((r) => setTimeout(r, 100));
}
const code = await exited;
const seconds = (performance.now() - started) / 1000;
const finalJobs = committed();
const peak = Math.max(...samples.map((s) => s.rss));
const tenth = samples.find((s) => s.jobs >= total / 10);
const last = samples.at(-1);
const mb = (kib: number) => (kib / 1024).toFixed(1);
console.log(`exit ${code}; ${finalJobs} of ${total} fold jobs stored; ${seconds.toFixed(1)} s wall; ${samples.length} RSS samples`);
console.log(`peak RSS ${mb(peak)} MiB`);
if (tenth && last) console.log(`RSS at 10 % of the jobs (${tenth.jobs} stored, ${tenth.at.toFixed(1)} s) ${mb(tenth.rss)} MiB; at the end ${mb(last.rss)} MiB; growth ${mb(last.rss - tenth.rss)} MiB`);
for (const q of [0.25, 0.5, 0.75]) {
  const s = samples.find((x) => x.jobs >= total * q);
  if (s) console.log(`RSS at ${q * 100} % of the jobs: ${mb(s.rss)} MiB`);
}
console.log(`run folder: ${runDir}`);
