import { existsSync, readFileSync, statSync } from "node:fs";
import { join } from "node:path";
import { type Task, unpackDataset } from "@nightshift/core";
import type { RunStore } from "@nightshift/store";
import type { PooledPredictions } from "./trial-diagnostics.js";

/** The training part of a run's data, packed by the coordinator when the run starts. */
export const DATASET_PACK_FILE = "dataset.pack";

/** The true targets of a run's training rows, without the features. */
export interface RunTargets {
  readonly task: Task;
  readonly labels: readonly string[];
  readonly truth: Int32Array | Float64Array;
}

const CACHED_RUNS = 4;
const cache = new Map<string, { stamp: string; targets: RunTargets }>();

/**
 * The targets of a run folder's dataset pack. Only the target column is kept (copied out of
 * the pack), and only for the few runs looked at last, so a large pack is not held in memory.
 * Null when the folder has no pack (a store copied without it).
 */
export function runTargets(folder: string): RunTargets | null {
  const path = join(folder, DATASET_PACK_FILE);
  if (!existsSync(path)) return null;
  const info = statSync(path);
  const stamp = `${info.size}:${info.mtimeMs}`;
  const hit = cache.get(folder);
  if (hit && hit.stamp === stamp) {
    cache.delete(folder);
    cache.set(folder, hit);
    return hit.targets;
  }
  const dataset = unpackDataset(readFileSync(path));
  const target = dataset.target;
  const targets: RunTargets =
    target.kind === "classes"
      ? { task: dataset.task, labels: [...target.labels], truth: Int32Array.from(target.codes) }
      : { task: dataset.task, labels: [], truth: Float64Array.from(target.values) };
  cache.set(folder, { stamp, targets });
  while (cache.size > CACHED_RUNS) cache.delete(cache.keys().next().value as string);
  return targets;
}

/** A trial's stored out-of-fold predictions of every fold that has them, with the targets of the same rows. */
export function pooledPredictions(store: RunStore, targets: RunTargets, trial: number): PooledPredictions {
  const width = targets.task === "multiclass" ? targets.labels.length : 1;
  const byFold = store.outOfFold(trial);
  const folds = store.folds().filter((f) => byFold.has(f.fold));
  let rows = 0;
  for (const f of folds) rows += f.test.length;
  const truth = targets.task === "regression" ? new Float64Array(rows) : new Int32Array(rows);
  const predictions = new Float32Array(rows * width);
  let at = 0;
  for (const f of folds) {
    const oof = byFold.get(f.fold) as Float32Array;
    if (oof.length !== f.test.length * width) {
      throw new Error(`${store.folder}: trial ${trial} fold ${f.fold} holds ${oof.length} predictions for ${f.test.length} rows of width ${width}`);
    }
    for (let i = 0; i < f.test.length; i++) truth[at + i] = targets.truth[f.test[i]];
    predictions.set(oof, at * width);
    at += f.test.length;
  }
  return { task: targets.task, labels: targets.labels, truth, predictions, folds: folds.map((f) => f.fold) };
}
