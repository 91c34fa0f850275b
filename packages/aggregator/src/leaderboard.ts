import type { RunStore, TrialStatus } from "@nightshift/store";
import type { Board, BoardRow, EnsembleSummary, Importance } from "./board.js";
import { tiesWithBest } from "./corrected-t-test.js";

/** Facts about a run the board needs, kept in the store's meta table by the coordinator. */
export interface RunFacts {
  readonly runId: string;
  readonly metric: string;
  readonly direction: "max" | "min";
  readonly foldCount: number;
  /** n_test / n_train of one fold, for the corrected resampled t-test (1 / (k - 1) for k-fold). */
  readonly testFraction: number;
}

export function runFacts(store: RunStore): RunFacts {
  const need = (key: string): string => {
    const value = store.getMeta(key);
    if (value === undefined) throw new Error(`${store.folder}: run store has no '${key}'; was the run started?`);
    return value;
  };
  return {
    runId: need("run_id"),
    metric: need("metric"),
    direction: need("direction") === "min" ? "min" : "max",
    foldCount: Number(need("fold_count")),
    testFraction: Number(need("test_fraction")),
  };
}

const STATUS_ORDER: Record<TrialStatus, number> = { done: 0, pruned: 1, running: 2, queued: 3, failed: 4, timed_out: 5 };

function meanAndStd(values: readonly number[]): { mean: number | null; std: number | null } {
  if (values.length === 0) return { mean: null, std: null };
  let sum = 0;
  for (const v of values) sum += v;
  const mean = sum / values.length;
  // One fold gives no spread to report (a trial pruned after its first fold).
  if (values.length === 1) return { mean, std: null };
  let squares = 0;
  for (const v of values) squares += (v - mean) ** 2;
  return { mean, std: Math.sqrt(squares / (values.length - 1)) };
}

/**
 * The leaderboard of a run from its store: per trial the mean and sample standard
 * deviation of the per-fold scores, mean fit and predict seconds per fold, status, and
 * whether it is statistically tied with the best finished trial (corrected resampled
 * t-test on the paired per-fold scores, Nadeau & Bengio 2003; METHODS.md §4).
 */
export function buildBoard(store: RunStore, options: { top?: number; family?: string } = {}): Board {
  const facts = runFacts(store);
  const trials = store.trials();
  const byTrial = new Map<number, Array<{ fold: number; score: number | null; fit: number; predict: number }>>();
  for (const r of store.foldScores()) {
    const list = byTrial.get(r.trial) ?? [];
    list.push({ fold: r.fold, score: r.error === null ? r.score : null, fit: r.fitSeconds, predict: r.predictSeconds });
    byTrial.set(r.trial, list);
  }
  const rows = trials.map((t) => {
    const results = (byTrial.get(t.trial) ?? []).sort((a, b) => a.fold - b.fold);
    const folds = results.map((r) => r.score);
    const valid = folds.filter((s): s is number => s !== null);
    const { mean, std } = meanAndStd(valid);
    const timing = meanAndStd(results.map((r) => r.fit));
    const predicting = meanAndStd(results.map((r) => r.predict));
    return {
      trial: t.trial,
      family: t.family,
      params: t.params,
      mean: t.status === "failed" || t.status === "timed_out" ? null : mean,
      std: t.status === "failed" || t.status === "timed_out" ? null : std,
      folds,
      fit_s: timing.mean,
      predict_s: predicting.mean,
      status: t.status,
      message: t.message,
    };
  });
  const sign = facts.direction === "max" ? -1 : 1;
  rows.sort((a, b) => {
    const byStatus = STATUS_ORDER[a.status] - STATUS_ORDER[b.status];
    if (byStatus !== 0) return byStatus;
    if ((a.status === "done" || a.status === "pruned") && a.mean !== null && b.mean !== null && a.mean !== b.mean) return sign * (a.mean - b.mean);
    return a.trial - b.trial;
  });

  const done = rows.filter((r) => r.status === "done" && r.mean !== null);
  const ties = new Set<number>();
  if (done.length > 0) {
    const scores = done.map((r) => Float64Array.from(r.folds, (s) => (s === null ? Number.NaN : s)));
    tiesWithBest(scores, 0, facts.direction, facts.testFraction).forEach((tied, i) => {
      if (tied) ties.add(done[i].trial);
    });
  }
  let ranked: BoardRow[] = rows.map((r, i) => ({ rank: i + 1, ...r, tie_with_best: ties.has(r.trial) }));
  if (options.family) ranked = ranked.filter((r) => r.family === options.family);
  if (options.top !== undefined) ranked = ranked.slice(0, options.top);

  const ensembles = store.artifacts("ensemble").map((a) => a.data as EnsembleSummary);
  const holdout = store.artifact("holdout");
  const importance = store.artifact("importance");
  return {
    run: facts.runId,
    metric: facts.metric,
    direction: facts.direction,
    rows: ranked,
    ensembles,
    holdout: holdout ? (holdout.data as Board["holdout"]) : null,
    importance: importance ? (importance.data as Importance) : null,
  };
}
