import { type FoldJob, isRefitJob, type Job, type RefitJob } from "@nightshift/core";
import type { FoldContext } from "./fold-context.js";
import { type FoldOutcome, runFoldJob } from "./fold-job.js";
import { type RefitOutcome, runRefitJob } from "./refit-job.js";

/** The outcome a job of type J gives. */
export type OutcomeOf<J extends Job> = J extends RefitJob ? RefitOutcome : FoldOutcome;
export type JobOutcome = FoldOutcome | RefitOutcome;

export function isRefitOutcome(outcome: JobOutcome): outcome is RefitOutcome {
  return "kind" in outcome && outcome.kind === "refit";
}

/**
 * Every worker transport (local threads, queue workers) runs a validated job through this one
 * function, which dispatches on the job's kind.
 */
export function runJob<J extends Job>(context: FoldContext, job: J): OutcomeOf<J> {
  if (isRefitJob(job)) return runRefitJob(context, job) as OutcomeOf<J>;
  return runFoldJob(context, job as FoldJob) as OutcomeOf<J>;
}
