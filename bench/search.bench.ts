/**
 * The local search's own costs, measured through the real coordinator, pool and store:
 * 1. dispatch + commit overhead per fold job with a trivial learner (depth-1 tree on 800 rows):
 *    wall time per job minus the job's own fit + predict time. Target <= 5 ms.
 * 2. throughput of the demo plan with 2 workers against 1 worker on this machine's 2 cores.
 *    Target >= 1.7x. The 1-worker run is the reference, measured in the same script.
 * run: npm run build && npx tsx bench/search.bench.ts [--trials N]
 */
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { stringify } from "csv-stringify/sync";
import { runSearch } from "@nightshift/coordinator";
import { RunStore } from "@nightshift/store";
import { generateTurbineRows, TURBINE_COLUMNS } from "../packages/cli/src/demo/turbine-data.js";
import { defaultFamiliesYaml } from "../packages/cli/src/default-plan.js";

const trialsArg = process.argv.indexOf("--trials");
const demoTrials = trialsArg > 0 ? Number(process.argv[trialsArg + 1]) : 24;
const dir = mkdtempSync(join(tmpdir(), "nightshift-bench-search-"));

function writeData(name: string, turbines: number, weeks: number): void {
  writeFileSync(join(dir, name), stringify(generateTurbineRows({ turbines, weeks, seed: 5 }), { header: true, columns: [...TURBINE_COLUMNS] }));
}

async function timedRun(plan: string, workers: number, label: string): Promise<{ seconds: number; jobs: number; jobSeconds: number }> {
  const planPath = join(dir, `${label}.plan.yaml`);
  writeFileSync(planPath, plan);
  const runDir = join(dir, `run-${label}`);
  const start = performance.now();
  await runSearch({ planPath, runDir, workers, finalStep: false });
  const seconds = (performance.now() - start) / 1000;
  const store = RunStore.open(runDir, { readonly: true });
  const scores = store.foldScores();
  store.close();
  return { seconds, jobs: scores.length, jobSeconds: scores.reduce((s, r) => s + r.fitSeconds + r.predictSeconds, 0) };
}

writeData("tiny.csv", 40, 20);
const trivial = await timedRun(
  `name: overhead\nseed: 1\ndata: { train: tiny.csv, target: failed_within_30d, ignore: [turbine_id], holdout: 0 }\nfolds: { k: 5 }\nbudget: { trials: 300 }\nfamilies:\n  tree: { depth: 1 }\n`,
  1,
  "overhead",
);
// The run's fixed costs (reading the CSV, starting the pool) are included: an upper bound per job.
const overheadMs = ((trivial.seconds - trivial.jobSeconds) / trivial.jobs) * 1000;
console.log(`dispatch + commit overhead: ${trivial.jobs} trivial fold jobs in ${trivial.seconds.toFixed(2)} s, of which fitting ${trivial.jobSeconds.toFixed(2)} s -> ${overheadMs.toFixed(2)} ms per job (target <= 5 ms)`);

writeData("demo.csv", 400, 50);
const demoPlan = (name: string) =>
  `name: ${name}\nseed: 42\ndata: { train: demo.csv, target: failed_within_30d, ignore: [turbine_id, week], holdout: 0.2 }\nmetric: average_precision\nfolds: { k: 5 }\nbudget: { trials: ${demoTrials} }\n${defaultFamiliesYaml("binary", 20_000)}\n`;
const one = await timedRun(demoPlan("one"), 1, "one");
const two = await timedRun(demoPlan("two"), 2, "two");
console.log(`demo plan (${demoTrials} trials x 5 folds, ${one.jobs} fold jobs): 1 worker ${one.seconds.toFixed(1)} s, 2 workers ${two.seconds.toFixed(1)} s -> throughput ratio ${(one.seconds / two.seconds).toFixed(2)}x (target >= 1.7x)`);
