import type { FoldJob } from "@nightshift/core";
import { type FoldOutcome, timeLimitMessage } from "@nightshift/worker";

/**
 * Where fold jobs run: local worker threads, or (later) Redis workers. The scheduler
 * only needs to hand over a job and await its outcome; `capacity` says how many jobs
 * to keep in flight.
 */
export interface JobRunner {
  readonly capacity: number;
  run(job: FoldJob): Promise<FoldOutcome>;
  close(): Promise<void>;
}

/** A job over its time limit: recorded as timed out, its thread replaced. */
export class JobTimeoutError extends Error {
  constructor(readonly seconds: number) {
    super(timeLimitMessage(seconds));
    this.name = "JobTimeoutError";
  }
}
