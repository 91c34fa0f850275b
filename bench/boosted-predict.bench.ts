/**
 * Prediction of the histogram boosting family alone: the WebAssembly walk of
 * boosted/walk-kernel.ts against the JavaScript walk of boosted/predict.ts, on the model of
 * bench/boosted.bench.ts (hypercube set, 200 rounds, depth 6, 30 features), in the same process.
 *
 *   npx tsx bench/boosted-predict.bench.ts [--repeats N]
 *
 * Prints M rows per CPU second for each engine (best of N passes over the 20,000 test rows,
 * binning included, the initial scores and the link function not), and checks that both give
 * the same scores bit for bit. Figures go to docs/BENCHMARKS.md, section "Histogram boosting".
 */
import { createRng } from "@nightshift/core";
import type { BoostedModel } from "../packages/learners/src/boosted/boosted.js";
import { addTreeScores } from "../packages/learners/src/boosted/predict.js";
import { boostedLearner } from "../packages/learners/src/index.js";
import { loadHypercube, trainViewOf } from "./lib/hypercube.js";

const PARAMS = boostedLearner.params.parse({ rounds: 200, learning_rate: 0.1, depth: 6, leaves: 64, l2: 1, min_hessian: 1, min_leaf: 1 });

function main(): void {
  const args = process.argv.slice(2);
  const repeats = args.includes("--repeats") ? Number(args[args.indexOf("--repeats") + 1]) : 15;
  const set = loadHypercube();
  const model = boostedLearner.fit(trainViewOf(set), PARAMS, createRng("bench", 1)) as BoostedModel;
  const view = { columns: set.columns, rows: set.test };
  const n = set.test.length;
  const scores = { webassembly: new Float64Array(n), javascript: new Float64Array(n) };
  for (const engine of ["webassembly", "javascript"] as const) {
    let best = Infinity;
    for (let i = 0; i < repeats; i++) {
      const raw = new Float64Array(n);
      const cpu0 = process.cpuUsage();
      addTreeScores(model.compiled, model.mapper, view, 1, raw, engine);
      const cpu = process.cpuUsage(cpu0);
      best = Math.min(best, (cpu.user + cpu.system) / 1e6);
      scores[engine] = raw;
    }
    console.log(`${engine}: ${(n / best / 1e6).toFixed(3)} M rows per CPU second (best of ${repeats})`);
  }
  let differing = 0;
  for (let i = 0; i < n; i++) if (!Object.is(scores.webassembly[i], scores.javascript[i])) differing++;
  console.log(`scores differing between the engines: ${differing} of ${n}`);
  if (differing > 0) process.exitCode = 1;
}

main();
