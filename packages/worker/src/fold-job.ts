import { createRng, type FoldJob, predictionWidth, toStoredPredictions, trainView } from "@nightshift/core";
import { learnerFor } from "@nightshift/learners";
import { featureView, type FoldContext, targetOf } from "./fold-context.js";

/** What a fold job gives back. Scores and predictions are null when the fit failed. */
export interface FoldOutcome {
  readonly trial: number;
  readonly fold: number;
  readonly score: number | null;
  /** Predictions of the fold's test rows, float32, in the stored layout of `storedWidth`. */
  readonly outOfFold: Float32Array | null;
  readonly fitSeconds: number;
  readonly predictSeconds: number;
  readonly error: string | null;
}

/**
 * The fold job `(dataset, trial, fold) → result`: fit the trial's configuration on the
 * other folds, predict this fold, score it. Its randomness comes from (seed, trial, fold)
 * alone, so any worker, local or remote, first run or redo, gives the same bits.
 * A fit that fails (bad parameters, one class, no usable feature) is returned as an
 * outcome with its message, not thrown: the run records a failed trial and goes on.
 */
export function runFoldJob(context: FoldContext, job: FoldJob): FoldOutcome {
  const failed = (message: string, fitSeconds = 0): FoldOutcome => ({
    trial: job.trial,
    fold: job.fold,
    score: null,
    outOfFold: null,
    fitSeconds,
    predictSeconds: 0,
    error: message,
  });
  const rows = context.folds[job.fold];
  if (!rows) return failed(`fold ${job.fold} does not exist (the run has ${context.folds.length})`);
  const { dataset, metric } = context;
  const learner = learnerFor(job.family);
  let fitStart = performance.now();
  try {
    const params = learner.parseParams(job.params);
    const rng = createRng(job.seed, "trial", job.trial, "fold", job.fold);
    fitStart = performance.now();
    const model = learner.fit(trainView(dataset, rows.train), params, rng, { memo: context.memo, key: `fold${job.fold}` });
    const predictStart = performance.now();
    const predictions = learner.predict(model, featureView(dataset, rows.test));
    const predictSeconds = (performance.now() - predictStart) / 1000;
    const width = predictionWidth(dataset.task, dataset.target.kind === "classes" ? dataset.target.labels.length : 1);
    const score = metric.score(targetOf(dataset, rows.test), predictions, width);
    return {
      trial: job.trial,
      fold: job.fold,
      score: Number.isFinite(score) ? score : null,
      outOfFold: toStoredPredictions(dataset.task, predictions, width),
      fitSeconds: (predictStart - fitStart) / 1000,
      predictSeconds,
      error: Number.isFinite(score) ? null : `the ${metric.name} of this fold is not a number`,
    };
  } catch (error) {
    return failed(error instanceof Error ? error.message : String(error), (performance.now() - fitStart) / 1000);
  }
}
