/**
 * How fast the HTTP API answers for a large run: 5,000 trials × 5 folds in the store (the
 * fold scores follow a fixed formula; no model is fitted). Target: the board answers in
 * <= 100 ms. Reference in the same script: building the same board by calling the
 * aggregator directly on an open store (what any board costs before HTTP, schema checks
 * and JSON), so the ratio is the server's own overhead.
 * run: npx tsx bench/server.bench.ts
 */
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { buildBoard } from "@nightshift/aggregator";
import { RunStore } from "@nightshift/store";
import { createServer } from "../packages/server/src/http-server.js";

const TRIALS = 5000;
const FOLDS = 5;
const REPEAT = 15;
const FAMILIES = ["logistic", "tree", "forest", "extra_trees", "boosted", "knn"];

const runsDir = mkdtempSync(join(tmpdir(), "nightshift-bench-server-"));
const folder = join(runsDir, "large-run");
const store = RunStore.open(folder, { create: true });
store.initMeta({ run_id: "large-run", metric: "average_precision", direction: "max", task: "binary", fold_count: String(FOLDS), test_fraction: String(1 / (FOLDS - 1)), state: "finished", created_at: "2026-12-01T22:00:00.000Z", plan: "{}" });
store.addTrials(Array.from({ length: TRIALS }, (_, trial) => ({ trial, family: FAMILIES[trial % FAMILIES.length], params: { depth: (trial % 13) + 2, l2: 10 ** ((trial % 7) - 3), trees: 50 + (trial % 350) } })));
store.addEvent("run_started", { run: "large-run", trials: TRIALS, folds: FOLDS });
for (let trial = 0; trial < TRIALS; trial++) {
  // A spread of trial means with fold noise around each, so the tie test has work to do.
  const base = 0.2 + 0.5 * (((trial * 2654435761) % 4096) / 4096);
  let sum = 0;
  for (let fold = 0; fold < FOLDS; fold++) {
    const score = base + 0.02 * ((((trial + 1) * (fold + 3) * 40503) % 1000) / 1000 - 0.5);
    sum += score;
    store.commitFoldResult({ trial, fold, score, fitSeconds: 1 + (trial % 5), predictSeconds: 0.1, outOfFold: null, error: null }, { status: fold === FOLDS - 1 ? "done" : "running", message: null }, { kind: "fold_done", data: { trial, fold, score, error: null } });
  }
  store.addEvent("trial_done", { trial, family: FAMILIES[trial % FAMILIES.length], score: sum / FOLDS });
}
store.addEvent("run_finished", { run: "large-run", stoppedBy: "finished", foldsRun: TRIALS * FOLDS });
store.close();

function median(values: number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  return sorted[Math.floor(sorted.length / 2)];
}

async function timeIt(task: () => unknown | Promise<unknown>): Promise<number> {
  await task();
  const times: number[] = [];
  for (let i = 0; i < REPEAT; i++) {
    const start = performance.now();
    await task();
    times.push(performance.now() - start);
  }
  return median(times);
}

const reader = RunStore.open(folder, { readonly: true });
const direct = await timeIt(() => buildBoard(reader));
reader.close();

const app = await createServer({ runsDir });
const inject = (url: string) => async () => {
  const r = await app.inject({ method: "GET", url });
  if (r.statusCode !== 200) throw new Error(`${url}: ${r.statusCode} ${r.body}`);
  return r.body.length;
};
const routes: Array<[string, string]> = [
  ["board, first page of 50", "/api/runs/large-run/board"],
  ["board sorted by fit time, one family", "/api/runs/large-run/board?family=forest&sort=fit_s&limit=50"],
  ["board, all 5,000 rows", "/api/runs/large-run/board?limit=10000"],
  ["run detail (timeline of 5,000 trials)", "/api/runs/large-run"],
  ["run list", "/api/runs"],
];
console.log(`run of ${TRIALS} trials × ${FOLDS} folds; median of ${REPEAT} requests (fastify inject, no network)`);
console.log(`reference: buildBoard on an open store: ${direct.toFixed(1)} ms`);
for (const [name, url] of routes) {
  const ms = await timeIt(inject(url));
  const bytes = await inject(url)();
  console.log(`${name.padEnd(40)} ${ms.toFixed(1).padStart(7)} ms  (${(ms / direct).toFixed(2)}× reference, ${(bytes / 1024).toFixed(0)} KiB)`);
}
// A live run: the coordinator commits between two requests, so each one rebuilds the board.
const writer = RunStore.open(folder);
let commits = 0;
const live = await timeIt(async () => {
  writer.addEvent("halving", { batch: commits++, rung: 0, promoted: [], dropped: [] });
  return inject("/api/runs/large-run/board")();
});
writer.close();
console.log(`${"board, first page, store changed before each".padEnd(40)} ${live.toFixed(1).padStart(7)} ms  (${(live / direct).toFixed(2)}× reference)`);
await app.close();
rmSync(runsDir, { recursive: true, force: true });
