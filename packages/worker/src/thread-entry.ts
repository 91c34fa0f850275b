import { workerData } from "node:worker_threads";
import { FoldJobSchema, metricByName, unpackDataset } from "@nightshift/core";
import { createFoldContext, type FoldContext } from "./fold-context.js";
import { type FoldOutcome, runFoldJob } from "./fold-job.js";
import { otherNodeMajor } from "./node-major.js";

/** What the local pool hands each thread once: the shared dataset pack and the folds. */
export interface ThreadSetup {
  /** The training part's pack, backed by a SharedArrayBuffer: every thread reads the same memory. */
  readonly pack: Uint8Array;
  readonly foldTests: readonly Uint32Array[];
  readonly metric: string;
}

let context: FoldContext | undefined;

function setup(): FoldContext {
  if (!context) {
    const { pack, foldTests, metric } = workerData as ThreadSetup;
    context = createFoldContext(unpackDataset(pack), foldTests, metricByName(metric));
  }
  return context;
}

/** Piscina task: validate the job (workers run data, not code), then run it. */
export default function foldTask(raw: unknown): FoldOutcome {
  const job = FoldJobSchema.parse(raw);
  const refusal = otherNodeMajor(job.node);
  if (refusal !== null) throw new Error(refusal);
  return runFoldJob(setup(), job);
}
