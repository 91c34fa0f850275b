import { workerData } from "node:worker_threads";
import { JobSchema, metricByName, unpackDataset } from "@nightshift/core";
import { createFoldContext, type FoldContext } from "./fold-context.js";
import { otherNodeMajor } from "./node-major.js";
import { type JobOutcome, runJob } from "./run-job.js";

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
export default function jobTask(raw: unknown): JobOutcome {
  const job = JobSchema.parse(raw);
  const refusal = otherNodeMajor(job.node);
  if (refusal !== null) throw new Error(refusal);
  return runJob(setup(), job);
}
