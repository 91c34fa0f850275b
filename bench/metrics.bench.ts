/**
 * Average precision and ROC AUC on 1,000,000 scores, against scikit-learn on the same scores.
 *
 *   npx tsx bench/metrics.bench.ts
 *
 * Target: each ≤ 150 ms on 10^6 scores. scikit-learn is timed through Debian's /usr/bin/python3
 * when it has sklearn (skipped otherwise); the ratio is scikit-learn time / our time.
 */
import { spawnSync } from "node:child_process";
import { existsSync, mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { createRng } from "../packages/core/src/random.js";
import { averagePrecision, createMetricScratch, METRICS, rocAuc } from "../packages/core/src/metrics/index.js";

const PYTHON = "/usr/bin/python3";
const REPEATS = 7;

interface Case {
  readonly name: string;
  readonly positive: Uint8Array;
  readonly scores: Float64Array;
}

/** Scores correlated with the label; `decimals` ≥ 0 rounds them, giving heavy ties. */
function makeCase(name: string, n: number, decimals: number | null): Case {
  const rng = createRng("bench-metrics", name);
  const positive = new Uint8Array(n);
  const scores = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    positive[i] = rng.next() < 0.2 ? 1 : 0;
    const p = 1 / (1 + Math.exp(-(rng.normal() + 1.5 * positive[i] - 0.75)));
    scores[i] = decimals === null ? p : Math.round(p * 10 ** decimals) / 10 ** decimals;
  }
  return { name, positive, scores };
}

function median(values: number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  return sorted[Math.floor(sorted.length / 2)];
}

function time(run: () => number): { ms: number; value: number } {
  let value = run(); // warm-up: JIT and scratch growth
  run();
  const times: number[] = [];
  for (let r = 0; r < REPEATS; r++) {
    const start = performance.now();
    value = run();
    times.push(performance.now() - start);
  }
  return { ms: median(times), value };
}

const PYTHON_TIMER = `
import json, sys, time
import numpy as np
import sklearn
from sklearn.metrics import average_precision_score, roc_auc_score
scores = np.fromfile(sys.argv[1], dtype=np.float64)
labels = np.fromfile(sys.argv[2], dtype=np.uint8).astype(np.int64)
out = {"sklearn": sklearn.__version__}
for name, fn in (("ap", average_precision_score), ("auc", roc_auc_score)):
    fn(labels, scores)
    times = []
    for _ in range(${REPEATS}):
        start = time.perf_counter()
        value = fn(labels, scores)
        times.append((time.perf_counter() - start) * 1000)
    out[name] = {"ms": sorted(times)[len(times) // 2], "value": float(value)}
print(json.dumps(out))
`;

interface SklearnTiming {
  sklearn: string;
  ap: { ms: number; value: number };
  auc: { ms: number; value: number };
}

function hasSklearn(): boolean {
  return existsSync(PYTHON) && spawnSync(PYTHON, ["-c", "import sklearn"]).status === 0;
}

function timeSklearn(c: Case, directory: string): SklearnTiming {
  const scoresPath = join(directory, `${c.name}-scores.f64`);
  const labelsPath = join(directory, `${c.name}-labels.u8`);
  writeFileSync(scoresPath, new Uint8Array(c.scores.buffer, c.scores.byteOffset, c.scores.byteLength));
  writeFileSync(labelsPath, c.positive);
  const result = spawnSync(PYTHON, ["-c", PYTHON_TIMER, scoresPath, labelsPath], { encoding: "utf8" });
  if (result.status !== 0) throw new Error(`scikit-learn timing failed: ${result.stderr}`);
  return JSON.parse(result.stdout) as SklearnTiming;
}

const cases = [
  makeCase("1e6 scores, 2 decimals (101 distinct)", 1_000_000, 2),
  makeCase("1e6 scores, 4 decimals", 1_000_000, 4),
  makeCase("1e6 scores, no rounding", 1_000_000, null),
  makeCase("1e5 scores, 3 decimals", 100_000, 3),
];
const scratch = createMetricScratch();
const withSklearn = hasSklearn();
const directory = mkdtempSync(join(tmpdir(), "nightshift-bench-metrics-"));
console.log(`node ${process.version}; median of ${REPEATS} runs after 2 warm-ups; ratio = scikit-learn ms / ours`);
try {
  for (const c of cases) {
    const ap = time(() => averagePrecision(c.positive, c.scores, scratch));
    const auc = time(() => rocAuc(c.positive, c.scores, scratch));
    let apLine = `AP  ${ap.ms.toFixed(1).padStart(6)} ms`;
    let aucLine = `AUC ${auc.ms.toFixed(1).padStart(6)} ms`;
    if (withSklearn) {
      const sk = timeSklearn(c, directory);
      apLine += `  scikit-learn ${sk.sklearn} ${sk.ap.ms.toFixed(1).padStart(6)} ms  ratio ${(sk.ap.ms / ap.ms).toFixed(2)}  |Δ| ${Math.abs(sk.ap.value - ap.value).toExponential(1)}`;
      aucLine += `  scikit-learn ${sk.sklearn} ${sk.auc.ms.toFixed(1).padStart(6)} ms  ratio ${(sk.auc.ms / auc.ms).toFixed(2)}  |Δ| ${Math.abs(sk.auc.value - auc.value).toExponential(1)}`;
    }
    console.log(`${c.name}\n  ${apLine}\n  ${aucLine}`);
  }
  if (!withSklearn) console.log(`(${PYTHON} with scikit-learn not found: no reference timings)`);

  // Ensemble-selection shape: one metric call on 100,000 rows × 2 columns through the registry.
  const selection = cases[3];
  const y = Int32Array.from(selection.positive);
  const predictions = new Float64Array(2 * y.length);
  for (let i = 0; i < y.length; i++) {
    predictions[2 * i] = 1 - selection.scores[i];
    predictions[2 * i + 1] = selection.scores[i];
  }
  const perCall = ["average_precision", "roc_auc", "log_loss", "mcc"] as const;
  console.log("registry score() on 1e5 rows × 2 columns (ensemble selection step):");
  for (const name of perCall) {
    const t = time(() => METRICS[name].score(y, predictions, 2));
    console.log(`  ${name.padEnd(18)} ${t.ms.toFixed(2).padStart(6)} ms`);
  }
} finally {
  rmSync(directory, { recursive: true, force: true });
}
