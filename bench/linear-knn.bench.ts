/**
 * Logistic regression fit and k-NN prediction on the shared hypercube set (100,000 × 30, ~3.5%
 * positives; first 80,000 rows train, last 20,000 predicted), against scikit-learn 1.2.1 run on
 * the same rows in the same script (bench/lib/sklearn_linear_knn.py, one thread).
 *
 * usage: npx tsx bench/linear-knn.bench.ts [--l2 1] [--k 15] [--repeats 7]
 * Targets: logistic fit ≤ 2× scikit-learn's lbfgs with test AP within 0.005; k-NN predict ≤ 1×
 * scikit-learn's brute force.
 */
import { execFileSync } from "node:child_process";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import { parseArgs } from "node:util";
import { createRng } from "@nightshift/core";
import { knnLearner, logisticLearner } from "@nightshift/learners";
import { averagePrecision } from "./lib/average-precision.js";
import { loadHypercube, trainViewOf } from "./lib/hypercube.js";

const here = dirname(fileURLToPath(import.meta.url));
const { values } = parseArgs({ options: { l2: { type: "string", default: "1" }, k: { type: "string", default: "15" }, repeats: { type: "string", default: "7" } } });
const l2 = Number(values.l2);
const k = Number(values.k);
const repeats = Number(values.repeats);

interface Reference {
  logistic: { fit_s: number; fit_cpu_s: number; iterations: number; test_ap: number };
  knn: { predict_s: number; predict_cpu_s: number; test_ap: number };
  versions: Record<string, string>;
}

/** Best wall-clock and best CPU seconds over `n` runs of `fn`, with the last result. */
function bestOf<T>(n: number, fn: () => T): { wall: number; cpu: number; result: T } {
  let wall = Infinity;
  let cpu = Infinity;
  let result!: T;
  for (let i = 0; i < n; i++) {
    const startCpu = process.cpuUsage();
    const start = performance.now();
    result = fn();
    wall = Math.min(wall, (performance.now() - start) / 1000);
    const used = process.cpuUsage(startCpu);
    cpu = Math.min(cpu, (used.user + used.system) / 1e6);
  }
  return { wall, cpu, result };
}

const set = loadHypercube();
const train = trainViewOf(set);
const test = { columns: set.columns, rows: set.test };
const positive = Array.from(set.test, (r) => set.target.codes[r]);
const rng = createRng("bench", "linear-knn");

const logisticParams = logisticLearner.params.parse({ l2 });
const logistic = bestOf(repeats, () => logisticLearner.fit(train, logisticParams, rng));
const logisticAp = averagePrecision(positive, Array.from(logisticLearner.predict(logistic.result, test).filter((_, i) => i % 2 === 1)));

const reference = JSON.parse(
  execFileSync("/usr/bin/python3", [join(here, "lib", "sklearn_linear_knn.py"), set.prefix, String(l2), String(k), String(repeats)], {
    env: { ...process.env, OMP_NUM_THREADS: "1", OPENBLAS_NUM_THREADS: "1", MKL_NUM_THREADS: "1" },
    encoding: "utf8",
  }),
) as Reference;

const knnModel = knnLearner.fit(train, knnLearner.params.parse({ k }), rng);
const knn = bestOf(1, () => knnLearner.predict(knnModel, test));
const knnAp = averagePrecision(positive, Array.from(knn.result.filter((_, i) => i % 2 === 1)));

const row = (name: string, ours: { wall: number; cpu: number }, wall: number, cpu: number, target: number) =>
  `${name.padEnd(34)} ${ours.wall.toFixed(3).padStart(8)} ${wall.toFixed(3).padStart(8)} ${(ours.wall / wall).toFixed(2).padStart(7)}×` +
  ` ${(ours.cpu / cpu).toFixed(2).padStart(7)}×   ≤ ${target}×`;
console.log(`hypercube ${set.rows} × 30, train ${set.train.length}, predict ${set.test.length}; scikit-learn ${reference.versions.sklearn}, one thread`);
console.log(`${"".padEnd(34)} ${"ours s".padStart(8)} ${"sklearn".padStart(8)} ${"wall".padStart(8)} ${"cpu".padStart(8)}   target`);
console.log(row(`logistic fit (l2=${l2}; C=${1 / l2})`, logistic, reference.logistic.fit_s, reference.logistic.fit_cpu_s, 2));
console.log(row(`knn predict (k=${k}, uniform)`, knn, reference.knn.predict_s, reference.knn.predict_cpu_s, 1));
const iterations = logistic.result.optimisation?.iterations ?? 0;
console.log(`logistic: L-BFGS iterations ours ${iterations}, scikit-learn ${reference.logistic.iterations}; test AP ours ${logisticAp.toFixed(4)}, scikit-learn ${reference.logistic.test_ap.toFixed(4)} (difference ${(logisticAp - reference.logistic.test_ap).toFixed(4)}, target ≤ 0.005)`);
console.log(`knn: test AP ours ${knnAp.toFixed(4)}, scikit-learn ${reference.knn.test_ap.toFixed(4)}`);
