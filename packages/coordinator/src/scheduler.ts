import { type FoldJob, JOB_SCHEMA_VERSION, NODE_MAJOR } from "@nightshift/core";
import type { RunStore, TrialStatus } from "@nightshift/store";
import type { FoldOutcome } from "@nightshift/worker";
import { promote, rungFolds } from "./halving.js";
import { type JobRunner, JobsRefusedError, JobTimeoutError } from "./job-runner.js";
import type { Trial } from "./trials.js";

export interface ScheduleSpec {
  readonly runId: string;
  readonly seed: number;
  readonly datasetFingerprint: string;
  readonly trials: readonly Trial[];
  readonly foldCount: number;
  readonly direction: "max" | "min";
  readonly halving: { readonly eta: number; readonly batch: number } | null;
  /** Time limit of one fold job, seconds (the plan's trial_minutes spread over the folds). */
  readonly timeoutSeconds: number | null;
  /** Wall-clock end of the budget (ms since epoch); no new job starts after it. */
  readonly deadline: number | null;
}

export interface Progress {
  readonly foldsDone: number;
  readonly foldsPlanned: number;
  readonly trialsFinished: number;
  readonly trialsPlanned: number;
  readonly best: { trial: number; score: number } | null;
  readonly foldsPerSecond: number;
  readonly etaSeconds: number | null;
}

export interface ScheduleHooks {
  onProgress?(progress: Progress): void;
  /** Checked before each new job starts: true stops dispatching (in-flight jobs finish). */
  shouldStop?(): boolean;
}

export interface ScheduleSummary {
  readonly completed: boolean;
  readonly stoppedBy: "finished" | "time_budget" | "interrupted";
  readonly foldsRun: number;
}

interface JobKey {
  readonly trial: number;
  readonly fold: number;
}

/**
 * Runs a run's fold jobs on a runner and commits each outcome to the store before taking
 * the next decision. Everything decided here depends on stored scores only (never on
 * which job finished first), so a resumed or re-ordered run reaches the same state:
 * jobs already in the store are not redone, and halving decisions are recomputed from
 * the same scores.
 */
export async function runSchedule(store: RunStore, runner: JobRunner, spec: ScheduleSpec, hooks: ScheduleHooks = {}): Promise<ScheduleSummary> {
  const trialsById = new Map(spec.trials.map((t) => [t.trial, t]));
  const scores = new Map<number, Map<number, number | null>>();
  for (const t of spec.trials) scores.set(t.trial, new Map());
  for (const r of store.foldScores()) scores.get(r.trial)?.set(r.fold, r.error === null ? r.score : null);
  const statusOf = new Map(store.trials().map((t) => [t.trial, t.status]));
  /** The error of each failed fold, by trial: a trial with any is failed. */
  const errors = new Map<number, Map<number, string>>();
  const failed = new Set<number>();
  const noteError = (trial: number, fold: number, error: string): void => {
    let byFold = errors.get(trial);
    if (!byFold) errors.set(trial, (byFold = new Map()));
    byFold.set(fold, error);
    failed.add(trial);
  };
  for (const r of store.foldScores()) if (r.error !== null && trialsById.has(r.trial)) noteError(r.trial, r.fold, r.error);

  const meanOver = (trial: number, folds: number): number | null => {
    const byFold = scores.get(trial);
    let sum = 0;
    for (let f = 0; f < folds; f++) {
      const s = byFold?.get(f);
      if (s === undefined || s === null) return null;
      sum += s;
    }
    return sum / folds;
  };

  // --- which folds each trial must run -----------------------------------------------
  const rungs = spec.halving ? rungFolds(spec.foldCount, spec.halving.eta) : [spec.foldCount];
  const finalFolds = spec.foldCount;
  /** Folds a trial is currently entitled to (grows with promotions). */
  const entitled = new Map<number, number>();
  const batches: Array<{ id: number; trials: number[]; rung: number; alive: number[] }> = [];
  if (spec.halving) {
    const size = spec.halving.batch;
    for (let start = 0, id = 0; start < spec.trials.length; start += size, id++) {
      const members = spec.trials.slice(start, start + size).map((t) => t.trial);
      batches.push({ id, trials: members, rung: 0, alive: members });
      for (const t of members) entitled.set(t, rungs[0]);
    }
  } else for (const t of spec.trials) entitled.set(t.trial, finalFolds);

  const rungComplete = (batch: (typeof batches)[number]): boolean =>
    batch.alive.every((t) => failed.has(t) || Array.from({ length: rungs[batch.rung] }, (_, f) => f).every((f) => scores.get(t)?.has(f)));

  const pendingPromotions: JobKey[] = [];
  /** Advances a batch through every rung whose results are all in; returns true if anything changed. */
  const advance = (batch: (typeof batches)[number]): void => {
    while (batch.rung < rungs.length - 1 && rungComplete(batch)) {
      const folds = rungs[batch.rung];
      const entries = batch.alive.map((t) => ({ trial: t, score: failed.has(t) ? null : meanOver(t, folds) }));
      const kept = promote(entries, spec.halving?.eta ?? 3, spec.direction);
      const decisions = entries.map((e) => ({ batch: batch.id, rung: batch.rung, trial: e.trial, score: e.score, promoted: kept.has(e.trial) }));
      store.recordHalving(decisions, { kind: "halving", data: { batch: batch.id, rung: batch.rung, folds, promoted: [...kept].sort((a, b) => a - b), dropped: entries.filter((e) => !kept.has(e.trial)).map((e) => e.trial) } });
      for (const e of entries) if (!kept.has(e.trial) && !failed.has(e.trial)) statusOf.set(e.trial, "pruned");
      batch.alive = batch.alive.filter((t) => kept.has(t));
      batch.rung++;
      for (const t of batch.alive) {
        entitled.set(t, rungs[batch.rung]);
        for (let f = folds; f < rungs[batch.rung]; f++) if (!scores.get(t)?.has(f)) pendingPromotions.push({ trial: t, fold: f });
      }
    }
  };
  for (const batch of batches) advance(batch);

  // --- trial completion ----------------------------------------------------------------
  // A failed trial still runs every fold it is entitled to: which folds a trial ran (and so
  // its stored results and its board row) must not depend on how many jobs were in flight
  // when its first failure came in.
  const isFinished = (trial: number): boolean => {
    const st = statusOf.get(trial);
    if (st === "pruned") return true;
    const byFold = scores.get(trial);
    if (failed.has(trial)) return (byFold?.size ?? 0) >= (entitled.get(trial) ?? 0);
    return (entitled.get(trial) ?? 0) === finalFolds && (byFold?.size ?? 0) >= finalFolds;
  };
  /** A failed trial's status and message come from its lowest failed fold, whatever order the folds ended in. */
  const failure = (trial: number): { status: TrialStatus; message: string } => {
    const byFold = errors.get(trial) as Map<number, string>;
    const fold = Math.min(...byFold.keys());
    const error = byFold.get(fold) as string;
    return { status: error.startsWith("timed out") ? "timed_out" : "failed", message: `fold ${fold}: ${error}` };
  };

  let best: { trial: number; score: number } | null = null;
  const consider = (trial: number): boolean => {
    if (failed.has(trial) || (scores.get(trial)?.size ?? 0) < finalFolds) return false;
    const mean = meanOver(trial, finalFolds);
    if (mean === null) return false;
    const better = best === null || (spec.direction === "max" ? mean > best.score : mean < best.score) || (mean === best.score && trial < best.trial);
    if (better) best = { trial, score: mean };
    return better;
  };
  for (const t of spec.trials) consider(t.trial);

  // --- job order: promotions first, then every trial's first rung in trial order --------
  const initial: JobKey[] = [];
  for (const t of spec.trials) {
    const folds = entitled.get(t.trial) ?? 0;
    if (statusOf.get(t.trial) === "pruned") continue;
    for (let f = 0; f < folds; f++) if (!scores.get(t.trial)?.has(f)) initial.push({ trial: t.trial, fold: f });
  }
  let cursor = 0;
  const nextJob = (): JobKey | undefined => {
    if (pendingPromotions.length > 0) return pendingPromotions.shift();
    while (cursor < initial.length) {
      const job = initial[cursor++];
      if (statusOf.get(job.trial) !== "pruned") return job;
    }
    return undefined;
  };

  const plannedFolds = (): number => {
    let n = 0;
    for (const t of spec.trials) n += failed.has(t.trial) ? Math.max(entitled.get(t.trial) ?? 0, scores.get(t.trial)?.size ?? 0) : statusOf.get(t.trial) === "pruned" ? (scores.get(t.trial)?.size ?? 0) : spec.halving && (entitled.get(t.trial) ?? 0) < finalFolds ? (entitled.get(t.trial) ?? 0) : finalFolds;
    return n;
  };
  const doneFolds = (): number => {
    let n = 0;
    for (const byFold of scores.values()) n += byFold.size;
    return n;
  };

  const started = Date.now();
  let foldsRun = 0;
  const report = (): void => {
    if (!hooks.onProgress) return;
    const elapsed = (Date.now() - started) / 1000;
    const rate = elapsed > 0 ? foldsRun / elapsed : 0;
    const done = doneFolds();
    const planned = Math.max(plannedFolds(), done);
    hooks.onProgress({
      foldsDone: done,
      foldsPlanned: planned,
      trialsFinished: spec.trials.filter((t) => isFinished(t.trial)).length,
      trialsPlanned: spec.trials.length,
      best,
      foldsPerSecond: rate,
      etaSeconds: rate > 0 ? (planned - done) / rate : null,
    });
  };

  const commit = (job: JobKey, outcome: FoldOutcome): void => {
    const errorText = outcome.error;
    let status: TrialStatus | undefined;
    let message: string | null = null;
    const firstFailure = errorText !== null && !failed.has(job.trial);
    scores.get(job.trial)?.set(job.fold, errorText === null ? outcome.score : null);
    if (errorText !== null) noteError(job.trial, job.fold, errorText);
    if (failed.has(job.trial)) ({ status, message } = failure(job.trial));
    else if (isFinished(job.trial)) status = "done";
    else status = "running";
    if (status !== "running" || statusOf.get(job.trial) !== "running") statusOf.set(job.trial, status);
    store.commitFoldResult(
      { trial: job.trial, fold: job.fold, score: errorText === null ? outcome.score : null, fitSeconds: outcome.fitSeconds, predictSeconds: outcome.predictSeconds, outOfFold: errorText === null ? outcome.outOfFold : null, error: errorText },
      { status, message },
      { kind: "fold_done", data: { trial: job.trial, fold: job.fold, score: outcome.score, error: errorText } },
    );
    if (status === "done") {
      const mean = meanOver(job.trial, finalFolds);
      store.addEvent("trial_done", { trial: job.trial, family: trialsById.get(job.trial)?.family, score: mean });
      if (consider(job.trial) && best) store.addEvent("new_best", { trial: best.trial, score: best.score });
    } else if (firstFailure) store.addEvent("trial_failed", { trial: job.trial, status, message });
  };

  const toJob = (key: JobKey): FoldJob => {
    const trial = trialsById.get(key.trial) as Trial;
    return {
      schema: JOB_SCHEMA_VERSION,
      kind: "fold",
      node: NODE_MAJOR,
      run: spec.runId,
      dataset: spec.datasetFingerprint,
      seed: spec.seed,
      trial: key.trial,
      fold: key.fold,
      family: trial.family,
      params: { ...trial.params },
      timeoutSeconds: spec.timeoutSeconds,
    };
  };

  // --- the dispatch loop ---------------------------------------------------------------
  let stoppedBy: ScheduleSummary["stoppedBy"] = "finished";
  let refused: JobsRefusedError | undefined;
  const inFlight = new Set<Promise<void>>();
  report();
  const launch = (key: JobKey): void => {
    if (statusOf.get(key.trial) === "queued" || statusOf.get(key.trial) === undefined) {
      statusOf.set(key.trial, "running");
      store.setTrialStatus(key.trial, "running");
    }
    const promise = runner
      .run(toJob(key))
      .catch((error: unknown): FoldOutcome | null => {
        if (!(error instanceof JobsRefusedError)) throw error;
        refused ??= error;
        return null;
      })
      .catch((error: unknown): FoldOutcome => ({
        trial: key.trial,
        fold: key.fold,
        score: null,
        outOfFold: null,
        fitSeconds: error instanceof JobTimeoutError ? error.seconds : 0,
        predictSeconds: 0,
        error: error instanceof JobTimeoutError ? `timed out: ${error.message}` : error instanceof Error ? error.message : String(error),
      }))
      .then((outcome) => {
        if (outcome === null) return;
        foldsRun++;
        commit(key, outcome);
        for (const batch of batches) if (batch.trials.includes(key.trial)) advance(batch);
        report();
      })
      .finally(() => inFlight.delete(promise));
    inFlight.add(promise);
  };

  for (;;) {
    while (inFlight.size < runner.capacity && refused === undefined) {
      if (hooks.shouldStop?.()) {
        stoppedBy = "interrupted";
        break;
      }
      if (spec.deadline !== null && Date.now() >= spec.deadline) {
        stoppedBy = "time_budget";
        break;
      }
      const key = nextJob();
      if (!key) break;
      launch(key);
    }
    if (inFlight.size === 0) break;
    await Promise.race(inFlight);
    if (stoppedBy !== "finished" && inFlight.size === 0) break;
  }
  await Promise.all(inFlight);
  // The jobs in flight are in (those refused are not stored): the run stops with the reason.
  if (refused) throw refused;
  const completed = spec.trials.every((t) => isFinished(t.trial));
  report();
  return { completed, stoppedBy: completed ? "finished" : stoppedBy, foldsRun };
}
