import type { Job } from "@nightshift/core";
import { type OutcomeOf, timeLimitMessage } from "@nightshift/worker";

/**
 * Where jobs run: local worker threads, or Redis workers. The scheduler and the final step
 * only hand over a job (fold or refit) and await its outcome; `capacity` says how many jobs
 * to keep in flight.
 */
export interface JobRunner {
  readonly capacity: number;
  run<J extends Job>(job: J): Promise<OutcomeOf<J>>;
  close(): Promise<void>;
}

/** A job over its time limit: recorded as timed out, its thread replaced. */
export class JobTimeoutError extends Error {
  constructor(readonly seconds: number) {
    super(timeLimitMessage(seconds));
    this.name = "JobTimeoutError";
  }
}
