/**
 * How fast the HTTP API answers for a large run: 5,000 trials × 5 folds in the store (the
 * fold scores follow a fixed formula; no model is fitted). Target: the board answers in
 * <= 100 ms. Reference in the same script: building the same board by calling the
 * aggregator directly on an open store (what any board costs before HTTP, schema checks
 * and JSON). The server keeps a run's board until the store changes, so a page of an
 * unchanged run costs a fraction of the reference; the last line measures a live run, where
 * the store changes before every request.
 * run: npx tsx bench/server.bench.ts
 */
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { buildBoard } from "@nightshift/aggregator";
import { RunStore } from "@nightshift/store";
import { createServer } from "../packages/server/src/http-server.js";
import { FOLDS, TRIALS, writeLargeRun } from "./lib/large-run-store.js";

const REPEAT = 15;
const runsDir = mkdtempSync(join(tmpdir(), "nightshift-bench-server-"));
const folder = writeLargeRun(runsDir);

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
