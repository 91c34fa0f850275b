/**
 * Tree families against scikit-learn on the shared hypercube set (bench/lib/hypercube.ts):
 * fit time of 100-tree `forest` and `extra_trees` vs RandomForestClassifier / ExtraTreesClassifier
 * (Debian's scikit-learn, one thread, run by bench/lib/sklearn_trees.py on the same rows), and the
 * average precision of each on the 20,000 held-out rows.
 *
 * usage: npx tsx bench/trees.bench.ts [trees=100] [extra AP seeds=0]
 * Each family is timed right after its reference, so both see the same load on a shared machine.
 * Wall and CPU seconds are both reported; CPU seconds are steadier when other work competes.
 * With extra AP seeds k > 0, extra trees are refitted on both sides with seeds 1..k to show how
 * much of the AP difference is seed noise.
 */
import { execFileSync } from "node:child_process";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import { createRng } from "@nightshift/core";
import { extraTreesLearner, forestLearner, parseParams, type TreeEnsembleModel } from "../packages/learners/src/index.js";
import { averagePrecisionOfColumn } from "./lib/average-precision.js";
import { loadHypercube, trainViewOf } from "./lib/hypercube.js";

type Family = "forest" | "extra_trees";

const here = dirname(fileURLToPath(import.meta.url));
const trees = Number(process.argv[2] ?? 100);
const apSeeds = Number(process.argv[3] ?? 0);
const set = loadHypercube();
const view = trainViewOf(set);
const testLabels = set.target.codes.subarray(set.train.length);

interface Reference {
  sklearn: string;
  numpy: string;
  results: Array<{ family: string; fit_s: number; fit_cpu_s: number; ap: number; mean_leaves: number }>;
}

function reference(family: Family, seed: number) {
  const script = join(here, "lib", "sklearn_trees.py");
  const out = execFileSync("/usr/bin/python3", [script, set.prefix, String(set.train.length), String(trees), String(seed), family], { encoding: "utf8" });
  const json = JSON.parse(out) as Reference;
  const result = json.results[0];
  return { version: `scikit-learn ${json.sklearn}, numpy ${json.numpy}`, fit_s: result.fit_s, fit_cpu_s: result.fit_cpu_s, ap: result.ap, leaves: result.mean_leaves };
}

function ours(family: Family, seed: number) {
  const learner = family === "forest" ? forestLearner : extraTreesLearner;
  const params = parseParams(family, learner.params, { trees });
  const cpu = process.cpuUsage();
  const start = performance.now();
  const model: TreeEnsembleModel = learner.fit(view, params as never, createRng(seed, family));
  const fit_s = (performance.now() - start) / 1000;
  const used = process.cpuUsage(cpu);
  const predictStart = performance.now();
  const p = learner.predict(model, { columns: set.columns, rows: set.test });
  const predict_s = (performance.now() - predictStart) / 1000;
  const leaves = model.trees.reduce((sum, t) => sum + (t.nodeCount + 1) / 2, 0) / model.trees.length;
  return { fit_s, fit_cpu_s: (used.user + used.system) / 1e6, predict_s, ap: averagePrecisionOfColumn(p, 2, 1, testLabels), leaves };
}

const rows: string[] = [];
let version = "";
const targets = { forest: 0.25, extra_trees: 1 } as const;
for (const family of ["forest", "extra_trees"] as const) {
  const ref = reference(family, 0);
  version = ref.version;
  const mine = ours(family, 0);
  const ratio = mine.fit_s / ref.fit_s;
  const cpuRatio = mine.fit_cpu_s / ref.fit_cpu_s;
  rows.push(
    `| ${family} | ${mine.fit_s.toFixed(2)} (${mine.fit_cpu_s.toFixed(2)} cpu) | ${ref.fit_s.toFixed(2)} (${ref.fit_cpu_s.toFixed(2)} cpu) | ` +
      `${ratio.toFixed(3)} (${cpuRatio.toFixed(3)} cpu) | ≤ ${targets[family]} | ${mine.ap.toFixed(4)} | ${ref.ap.toFixed(4)} | ${(mine.ap - ref.ap).toFixed(4)} | ` +
      `${mine.leaves.toFixed(0)} / ${ref.leaves} | ${mine.predict_s.toFixed(2)} |`,
  );
}
console.log(`hypercube ${set.rows} rows x 30, train ${set.train.length}, test ${set.test.length}; ${trees} trees; reference ${version}, n_jobs=1`);
console.log("| family | ours fit s | sklearn fit s | ratio | target | AP ours | AP sklearn | AP diff | mean leaves ours / sklearn | ours predict s |");
console.log("|---|---|---|---|---|---|---|---|---|---|");
for (const row of rows) console.log(row);

if (apSeeds > 0) {
  const mean = (xs: number[]) => xs.reduce((a, b) => a + b, 0) / xs.length;
  const oursAp: number[] = [];
  const refAp: number[] = [];
  for (let seed = 1; seed <= apSeeds; seed++) {
    oursAp.push(ours("extra_trees", seed).ap);
    refAp.push(reference("extra_trees", seed).ap);
  }
  const show = (xs: number[]) => `${mean(xs).toFixed(4)} (${Math.min(...xs).toFixed(4)}..${Math.max(...xs).toFixed(4)})`;
  console.log(`extra_trees AP over seeds 1..${apSeeds}: ours ${show(oursAp)}, sklearn ${show(refAp)}, mean diff ${(mean(oursAp) - mean(refAp)).toFixed(4)}`);
}
