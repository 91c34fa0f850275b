/**
 * Histogram boosting benchmark: our `boosted` family against xgboost's `hist` method on one
 * thread, on the shared hypercube set, measured in the same run.
 *
 *   npx tsx bench/boosted.bench.ts [--repeats N] [--skip-memory]
 *
 * Prints fit seconds (wall and CPU), test average precision, prediction rows per second, and
 * for 1,000,000 rows (800,000 training) the fit time and the peak RSS of a child process.
 * Figures go to docs/BENCHMARKS.md, section "Histogram boosting".
 */
import { execFileSync } from "node:child_process";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import { createRng } from "@nightshift/core";
import { boostedLearner } from "../packages/learners/src/index.js";
import { averagePrecision, column } from "../packages/learners/test/boosted-scores.js";
import { type BenchSet, loadHypercube, trainViewOf } from "./lib/hypercube.js";

const here = dirname(fileURLToPath(import.meta.url));

/** xgboost's defaults for the settings we share: depth 6, η 0.1, λ 1, min_child_weight 1, 200 rounds. */
const PARAMS = boostedLearner.params.parse({
  rounds: 200,
  learning_rate: 0.1,
  depth: 6,
  leaves: 64,
  l2: 1,
  min_hessian: 1,
  min_leaf: 1,
});

interface Timing {
  wall: number;
  cpu: number;
}

function measure<T>(fn: () => T): { time: Timing; result: T } {
  const cpu0 = process.cpuUsage();
  const wall0 = performance.now();
  const result = fn();
  const cpu = process.cpuUsage(cpu0);
  return { time: { wall: (performance.now() - wall0) / 1000, cpu: (cpu.user + cpu.system) / 1e6 }, result };
}

interface Reference {
  fit_seconds: number;
  fit_cpu_seconds: number;
  predict_seconds: number;
  predict_cpu_seconds: number;
  test_rows: number;
  average_precision: number;
  xgboost: string;
}

function xgboost(set: BenchSet): Reference {
  const out = execFileSync("/usr/bin/python3", [join(here, "lib", "xgboost_fit.py"), set.prefix, "200", "6", "0.1"], { encoding: "utf8" });
  return JSON.parse(out) as Reference;
}

function fitOurs(set: BenchSet) {
  const { time, result: model } = measure(() => boostedLearner.fit(trainViewOf(set), PARAMS, createRng("bench", 1)));
  const view = { columns: set.columns, rows: set.test };
  let predict: Timing = { wall: Infinity, cpu: Infinity };
  let scores: Float64Array = new Float64Array(0);
  for (let i = 0; i < 5; i++) {
    const run = measure(() => boostedLearner.predict(model, view));
    if (run.time.cpu < predict.cpu) predict = run.time;
    scores = run.result;
  }
  const ap = averagePrecision(
    Array.from(set.test, (r) => set.target.codes[r]),
    column(scores, 2, 1),
  );
  return { fit: time, predict, ap, nodes: model.trees.feature.length };
}

const f = (x: number, digits = 2) => x.toFixed(digits);

/** The 1,000,000-row fit, run in a child process so its peak RSS is its own. */
function memoryChild(): void {
  const set = loadHypercube(1_000_000);
  const { time, result: model } = measure(() => boostedLearner.fit(trainViewOf(set), PARAMS, createRng("bench", 1)));
  const scores = boostedLearner.predict(model, { columns: set.columns, rows: set.test });
  const ap = averagePrecision(
    Array.from(set.test, (r) => set.target.codes[r]),
    column(scores, 2, 1),
  );
  process.stdout.write(JSON.stringify({ fit: time, ap, maxRssMB: process.resourceUsage().maxRSS / 1024 }));
}

function main(): void {
  const args = process.argv.slice(2);
  if (args[0] === "--memory-child") return memoryChild();
  const repeats = args.includes("--repeats") ? Number(args[args.indexOf("--repeats") + 1]) : 1;
  const set = loadHypercube();
  console.log(`hypercube ${set.rows} rows x 30 (train ${set.train.length}, test ${set.test.length}); ours: ${JSON.stringify(PARAMS)}`);
  for (let run = 0; run < repeats; run++) {
    const ref = xgboost(set);
    const ours = fitOurs(set);
    const ourRate = set.test.length / ours.predict.cpu;
    const refRate = ref.test_rows / ref.predict_cpu_seconds;
    console.log(
      [
        `run ${run + 1}:`,
        `fit ours ${f(ours.fit.wall)} s (cpu ${f(ours.fit.cpu)}) vs xgboost ${ref.xgboost} ${f(ref.fit_seconds)} s (cpu ${f(ref.fit_cpu_seconds)})`,
        `ratio wall ${f(ours.fit.wall / ref.fit_seconds)} cpu ${f(ours.fit.cpu / ref.fit_cpu_seconds)} (target <= 2)`,
        `AP ours ${f(ours.ap, 4)} xgboost ${f(ref.average_precision, 4)} diff ${f(ours.ap - ref.average_precision, 4)} (target |diff| <= 0.01)`,
        `predict ours ${f(ourRate / 1e6, 3)} M rows/s (cpu; wall ${f(set.test.length / ours.predict.wall / 1e6, 3)}) vs xgboost ${f(refRate / 1e6, 3)} M rows/s (target >= 1)`,
        `model nodes ${ours.nodes}`,
      ].join("\n  "),
    );
  }
  if (args.includes("--skip-memory")) return;
  const big = loadHypercube(1_000_000);
  const ref = xgboost(big);
  const child = execFileSync(process.execPath, [...process.execArgv, fileURLToPath(import.meta.url), "--memory-child"], {
    encoding: "utf8",
    maxBuffer: 1 << 20,
  });
  const ours = JSON.parse(child) as { fit: Timing; ap: number; maxRssMB: number };
  console.log(
    [
      `1,000,000 rows (train ${big.train.length}):`,
      `fit ours ${f(ours.fit.wall)} s (cpu ${f(ours.fit.cpu)}) vs xgboost ${f(ref.fit_seconds)} s (cpu ${f(ref.fit_cpu_seconds)}), ratio wall ${f(ours.fit.wall / ref.fit_seconds)} cpu ${f(ours.fit.cpu / ref.fit_cpu_seconds)}`,
      `AP ours ${f(ours.ap, 4)} xgboost ${f(ref.average_precision, 4)}`,
      `peak RSS of the fitting process ${f(ours.maxRssMB, 0)} MB (target <= 1536 MB; includes the 1M x 30 set loaded twice: raw file and columns)`,
    ].join("\n  "),
  );
}

main();
