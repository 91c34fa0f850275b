import { type Job, metricByName, unpackDataset } from "@nightshift/core";
import { createFoldContext, type FoldContext } from "../fold-context.js";
import { type JobOutcome, runJob } from "../run-job.js";

/**
 * One job for a thread of a queue worker. The pack and the fold rows live in
 * SharedArrayBuffers, so handing them over copies nothing: every thread of the process
 * reads the one copy the pack cache holds.
 */
export interface FoldTask {
  /** Run and dataset: jobs with the same key share a context and its fold preprocessing memo. */
  readonly contextKey: string;
  readonly pack: Uint8Array;
  readonly foldRows: Uint32Array;
  readonly foldOffsets: readonly number[];
  readonly metric: string;
  /** Already accepted by `acceptJob` in the worker's main thread. */
  readonly job: Job;
}

/** Contexts of the runs this thread served last; a worker serves every run on its Redis. */
const contexts = new Map<string, FoldContext>();
const KEEP_CONTEXTS = 2;

function contextFor(task: FoldTask): FoldContext {
  let context = contexts.get(task.contextKey);
  if (context) {
    contexts.delete(task.contextKey);
  } else {
    const foldTests = task.foldOffsets.slice(0, -1).map((start, f) => task.foldRows.subarray(start, task.foldOffsets[f + 1]));
    context = createFoldContext(unpackDataset(task.pack), foldTests, metricByName(task.metric));
  }
  contexts.set(task.contextKey, context);
  while (contexts.size > KEEP_CONTEXTS) contexts.delete(contexts.keys().next().value as string);
  return context;
}

/** Piscina task: the one dispatch, `runJob(context, job)`, for fold and refit jobs alike. */
export default function foldThreadTask(task: FoldTask): JobOutcome {
  return runJob(contextFor(task), task.job);
}
