import { allRows, createRng, type RefitJob, trainView } from "@nightshift/core";
import { learnerFor, type ModelJson } from "@nightshift/learners";
import type { FoldContext } from "./fold-context.js";

/** What a refit job gives back: the model fitted on every training row, as plain JSON. */
export interface RefitOutcome {
  readonly kind: "refit";
  readonly trial: number;
  /** Null when the fit failed. */
  readonly model: ModelJson | null;
  readonly fitSeconds: number;
  readonly error: string | null;
}

/**
 * Refits a trial's configuration on all training rows (the final step's members). The
 * randomness comes from (seed, trial, "refit") alone, so any worker gives the same model.
 * The hold-out rows are not in the context: the model is returned, and the coordinator
 * predicts the hold-out with it once, when it opens the hold-out.
 */
export function runRefitJob(context: FoldContext, job: RefitJob): RefitOutcome {
  const learner = learnerFor(job.family);
  let fitStart = performance.now();
  try {
    const params = learner.parseParams(job.params);
    const rng = createRng(job.seed, "trial", job.trial, "refit");
    fitStart = performance.now();
    const model = learner.fit(trainView(context.dataset, allRows(context.dataset.rowCount)), params, rng, { memo: context.memo, key: "all" });
    const fitSeconds = (performance.now() - fitStart) / 1000;
    return { kind: "refit", trial: job.trial, model: learner.toJSON(model), fitSeconds, error: null };
  } catch (error) {
    return { kind: "refit", trial: job.trial, model: null, fitSeconds: (performance.now() - fitStart) / 1000, error: error instanceof Error ? error.message : String(error) };
  }
}
