/**
 * Greedy ensemble selection (Caruana et al. 2004) at the size the issue sets: 200 candidates ×
 * 100,000 rows × 50 rounds, target ≤ 5 s on one core.
 *
 *   npx tsx bench/ensemble-selection.bench.ts [--rows N] [--candidates M] [--rounds R]
 *
 * Candidates: invented scores with a shared signal, shared noise and their own noise, 10 %
 * positives; a third of them rounded to 2 decimals (the ties of forests' vote shares).
 * Reference, measured in the same script on the same rows: one evaluation of the registry's
 * metric on an averaged prediction (what a straightforward implementation does per candidate
 * and round) times the number of evaluations a full search makes (candidates × rounds).
 * Times are CPU seconds of this process (user + system) and wall seconds; on a shared machine
 * the CPU figure is the steadier one.
 */
import { createRng, metricByName, type MetricName } from "../packages/core/src/index.js";
import { greedySelection } from "../packages/aggregator/src/ensembles/greedy-selection.js";

function option(name: string, fallback: number): number {
  const at = process.argv.indexOf(`--${name}`);
  return at > 0 ? Number(process.argv[at + 1]) : fallback;
}
const rows = option("rows", 100_000);
const candidates = option("candidates", 200);
const rounds = option("rounds", 50);

const rng = createRng("bench-ensemble-selection");
const target = new Int32Array(rows);
const signal = new Float64Array(rows);
const shared = new Float64Array(rows);
for (let i = 0; i < rows; i++) {
  target[i] = rng.next() < 0.1 ? 1 : 0;
  signal[i] = rng.normal() + 1.5 * target[i];
  shared[i] = rng.normal();
}
const predictions = Array.from({ length: candidates }, (_, m) => {
  const a = 0.5 + rng.next();
  const b = rng.next();
  const c = 0.5 + rng.next();
  const bias = -2 - rng.next();
  const p = new Float32Array(rows);
  for (let i = 0; i < rows; i++) {
    const v = 1 / (1 + Math.exp(-(a * signal[i] + b * shared[i] + c * rng.normal() + bias)));
    p[i] = m % 3 === 0 ? Math.round(v * 100) / 100 : v;
  }
  return p;
});

function cpuSeconds(): number {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1e6;
}

/** Median CPU and wall time of `runs` calls of one registry evaluation on a fresh average. */
function referenceEvaluation(name: MetricName): { cpu: number; wall: number } {
  const metric = metricByName(name);
  const averaged = new Float64Array(rows * 2);
  const times: Array<{ cpu: number; wall: number }> = [];
  for (let r = 0; r < 9; r++) {
    const p = predictions[r % candidates];
    const cpu = cpuSeconds();
    const wall = performance.now();
    for (let i = 0; i < rows; i++) {
      const q = (3 * p[i] + predictions[(r + 1) % candidates][i]) / 4;
      averaged[2 * i] = 1 - q;
      averaged[2 * i + 1] = q;
    }
    metric.score(target, averaged, 2);
    times.push({ cpu: cpuSeconds() - cpu, wall: (performance.now() - wall) / 1000 });
  }
  times.sort((x, y) => x.cpu - y.cpu);
  return times[4];
}

console.log(`greedy selection: ${candidates} candidates × ${rows} rows × ${rounds} rounds (node ${process.version})`);
console.log("| metric | CPU s | wall s | exact evaluations | reference: one evaluation (ms) × " + candidates * rounds + " (s) | speed-up (CPU) |");
console.log("|---|---:|---:|---:|---:|---:|");
for (const name of ["average_precision", "roc_auc", "log_loss"] as const) {
  const reference = referenceEvaluation(name);
  const cpu = cpuSeconds();
  const wall = performance.now();
  const selection = greedySelection(predictions, target, "binary", 1, metricByName(name), { rounds, init: 0 });
  const cpuSpent = cpuSeconds() - cpu;
  const wallSpent = (performance.now() - wall) / 1000;
  const naive = reference.cpu * candidates * rounds;
  console.log(
    `| ${name} | ${cpuSpent.toFixed(2)} | ${wallSpent.toFixed(2)} | ${selection.evaluations} of ${candidates * rounds} | ${(reference.cpu * 1000).toFixed(2)} ms → ${naive.toFixed(1)} | ${(naive / cpuSpent).toFixed(1)}× |`,
  );
}
