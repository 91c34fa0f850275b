/**
 * How fast the coordinator commits fold results (one transaction each, predictions of
 * 20,000 rows as float32 blobs) into the run store. Target: >= 500 results per second.
 * Reference in the same script: writing the same bytes to a plain file with one fsync-free
 * append per result, the floor of any store.
 * run: npx tsx bench/store-ingest.bench.ts
 */
import { appendFileSync, mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { RunStore } from "@nightshift/store";

const RESULTS = 2000;
const ROWS = 20_000;
const dir = mkdtempSync(join(tmpdir(), "nightshift-bench-store-"));
const store = RunStore.open(join(dir, "run"), { create: true });
store.addTrials(Array.from({ length: RESULTS / 5 }, (_, trial) => ({ trial, family: "forest", params: { trees: 100 } })));
const predictions = Array.from({ length: 8 }, (_, k) => Float32Array.from({ length: ROWS }, (_, i) => ((i * 7919 + k) % 1000) / 1000));

let start = performance.now();
for (let i = 0; i < RESULTS; i++) {
  store.commitFoldResult(
    { trial: Math.floor(i / 5), fold: i % 5, score: 0.5, fitSeconds: 1, predictSeconds: 0.1, outOfFold: predictions[i % 8], error: null },
    { status: i % 5 === 4 ? "done" : "running", message: null },
    { kind: "fold_done", data: { trial: Math.floor(i / 5), fold: i % 5, score: 0.5 } },
  );
}
const storeSeconds = (performance.now() - start) / 1000;
store.close();

const file = join(dir, "plain.bin");
start = performance.now();
for (let i = 0; i < RESULTS; i++) appendFileSync(file, new Uint8Array(predictions[i % 8].buffer));
const fileSeconds = (performance.now() - start) / 1000;
rmSync(dir, { recursive: true, force: true });

const rate = RESULTS / storeSeconds;
console.log(`fold results committed: ${RESULTS} × ${ROWS} rows (float32) in ${storeSeconds.toFixed(2)} s = ${rate.toFixed(0)} results/s (target >= 500)`);
console.log(`plain file appends of the same bytes: ${(RESULTS / fileSeconds).toFixed(0)} /s; store/file time ratio ${(storeSeconds / fileSeconds).toFixed(2)}`);
