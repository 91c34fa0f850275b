import { workerData } from "node:worker_threads";
import { JobSchema, metricByName, NODE_MAJOR, unpackDataset } from "@nightshift/core";
import { createFoldContext, type FoldContext } from "./fold-context.js";
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
  if (job.node !== NODE_MAJOR) throw new Error(`job made by Node.js ${job.node}, this worker runs Node.js ${NODE_MAJOR}: results would not be bit-identical, so it is refused`);
  return runJob(setup(), job);
}
