import type { TrialStatus } from "@nightshift/store";
import type { RunActivity } from "./run-activity.js";
import type { RunSummary } from "./schemas.js";

/** Facts of a run's progress that change only when its store does (cached by the server). */
export interface RunCounts {
  readonly trials: RunSummary["trials"];
  readonly best: RunSummary["best"];
  readonly foldsDone: number;
  readonly foldsPlanned: number;
}

export interface CountsInput {
  readonly trials: ReadonlyArray<{ trial: number; status: TrialStatus }>;
  readonly results: ReadonlyArray<{ trial: number; score: number | null; error: string | null }>;
  readonly foldCount: number;
  /** Whether the plan drops poor trials early (successive halving). */
  readonly halving: boolean;
  readonly direction: "max" | "min";
}

/**
 * Trial counts, fold jobs done and planned, and the best finished trial, from a run's stored
 * trials and fold results. Fold jobs still to come are counted as every fold for an
 * unfinished trial, or, with halving (where most trials stop early), as the mean folds of the
 * trials finished so far.
 */
export function runCounts(input: CountsInput): RunCounts {
  const trials = { total: input.trials.length, done: 0, pruned: 0, failed: 0, timed_out: 0, running: 0, queued: 0 };
  for (const t of input.trials) trials[t.status]++;

  const stored = new Map<number, { folds: number; sum: number; valid: boolean }>();
  for (const r of input.results) {
    const entry = stored.get(r.trial) ?? { folds: 0, sum: 0, valid: true };
    entry.folds++;
    if (r.error === null && r.score !== null) entry.sum += r.score;
    else entry.valid = false;
    stored.set(r.trial, entry);
  }

  let finishedFolds = 0;
  let finished = 0;
  for (const t of input.trials) {
    if (t.status === "done" || t.status === "pruned") {
      finishedFolds += stored.get(t.trial)?.folds ?? 0;
      finished++;
    }
  }
  const expected = input.halving && finished > 0 ? finishedFolds / finished : input.foldCount;
  let planned = 0;
  for (const t of input.trials) {
    const have = stored.get(t.trial)?.folds ?? 0;
    planned += t.status === "queued" || t.status === "running" ? Math.max(have, expected) : have;
  }
  let done = 0;
  for (const entry of stored.values()) done += entry.folds;

  let best: { trial: number; score: number } | null = null;
  for (const t of input.trials) {
    if (t.status !== "done") continue;
    const entry = stored.get(t.trial);
    if (!entry || !entry.valid || entry.folds === 0) continue;
    const mean = entry.sum / entry.folds;
    const better = best === null || (input.direction === "max" ? mean > best.score : mean < best.score);
    if (better) best = { trial: t.trial, score: mean };
  }
  return { trials, best, foldsDone: done, foldsPlanned: Math.max(done, Math.round(planned)) };
}

/**
 * Progress and pace: the fold jobs committed since the run last (re)started over the time
 * since, and the time the jobs still planned take at that pace. Only a running run has a pace.
 */
export function runPace(counts: RunCounts, state: string, activity: Pick<RunActivity, "lastStartAt" | "foldsSinceStart">, now: number): RunSummary["progress"] {
  const { foldsDone: done, foldsPlanned: planned } = counts;
  const startedAt = activity.lastStartAt === null ? Number.NaN : Date.parse(activity.lastStartAt);
  const runningSeconds = Number.isFinite(startedAt) ? Math.max(0, (now - startedAt) / 1000) : null;
  const running = state === "running";
  const pace = running && runningSeconds !== null && runningSeconds > 0 && activity.foldsSinceStart > 0 ? activity.foldsSinceStart / runningSeconds : null;
  return {
    folds_done: done,
    folds_planned: planned,
    fraction: planned === 0 ? 0 : done / planned,
    running_s: running ? runningSeconds : null,
    folds_per_s: pace,
    eta_s: pace === null ? null : (planned - done) / pace,
  };
}

export interface ProgressInput extends CountsInput {
  /** The run store's state ("running", "finished", "time_budget", "interrupted"). */
  readonly state: string;
  readonly activity: Pick<RunActivity, "lastStartAt" | "foldsSinceStart">;
  /** Milliseconds since the epoch. */
  readonly now: number;
}

/** Counts, progress, pace and best trial in one go. */
export function runProgress(input: ProgressInput): Pick<RunSummary, "trials" | "progress" | "best"> {
  const counts = runCounts(input);
  return { trials: counts.trials, best: counts.best, progress: runPace(counts, input.state, input.activity, input.now) };
}
