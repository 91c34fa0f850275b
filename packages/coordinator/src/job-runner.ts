import { InputError, type Job } from "@nightshift/core";
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

/**
 * A worker refused a job because it runs another nightshift (job schema) or Node.js major than
 * the coordinator. No worker of that version can run any of the run's jobs, so the run stops
 * with nothing stored for the refused jobs (a failed trial would be final); it resumes once
 * the versions agree.
 */
export class JobsRefusedError extends InputError {
  constructor(reason: string) {
    super(
      "nightshift run --redis",
      `a worker refused this run's jobs: ${reason.replace(/^refused: /, "")}. Nothing was stored for the refused jobs; once every worker runs this coordinator's version, run the same command again to resume`,
    );
    this.name = "JobsRefusedError";
  }
}

/** A job over its time limit: recorded as timed out, its thread replaced. */
export class JobTimeoutError extends Error {
  constructor(readonly seconds: number) {
    super(timeLimitMessage(seconds));
    this.name = "JobTimeoutError";
  }
}
