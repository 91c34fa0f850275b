import { type Board, buildBoard, EnsembleSummarySchema, runFacts } from "@nightshift/aggregator";
import { TaskSchema } from "@nightshift/core";
import type { RunStore } from "@nightshift/store";
import type { RunActivity } from "./run-activity.js";
import { runProgress } from "./run-progress.js";
import { pooledPredictions, runTargets } from "./run-targets.js";
import {
  type EnsemblesResponse,
  HoldoutSchema,
  type RunDetail,
  type RunSummary,
  type TrialDetail,
  type TrialQuery,
} from "./schemas.js";
import { finiteOrNull, trialDiagnostics } from "./trial-diagnostics.js";

/*
 * The server's views of one run store: plain functions of an open store, shared by the
 * HTTP routes and the report.
 */

/** Whether a store holds a started run (its meta has what the board needs). */
export function isStartedRun(store: RunStore): boolean {
  return ["run_id", "metric", "direction", "fold_count", "test_fraction", "task"].every((key) => store.getMeta(key) !== undefined);
}

function planOf(store: RunStore): Record<string, unknown> {
  const text = store.getMeta("plan");
  if (text === undefined) return {};
  const plan = JSON.parse(text) as unknown;
  return plan !== null && typeof plan === "object" && !Array.isArray(plan) ? (plan as Record<string, unknown>) : {};
}

export function runSummary(id: string, store: RunStore, activity: RunActivity, now: number): RunSummary {
  const facts = runFacts(store);
  const plan = planOf(store);
  const state = store.getMeta("state") ?? "created";
  return {
    id,
    metric: facts.metric,
    direction: facts.direction,
    task: TaskSchema.parse(store.getMeta("task")),
    state,
    created_at: store.getMeta("created_at") ?? null,
    last_event_at: activity.lastEventAt,
    last_event_id: activity.lastId,
    ...runProgress({
      trials: store.trials(),
      results: store.foldScores(),
      foldCount: facts.foldCount,
      halving: plan.halving !== undefined && plan.halving !== null,
      direction: facts.direction,
      state,
      activity,
      now,
    }),
  };
}

function holdoutOf(store: RunStore): RunDetail["holdout"] {
  const stored = store.artifact("holdout");
  return stored ? HoldoutSchema.parse(stored.data) : null;
}

export function runDetail(id: string, store: RunStore, activity: RunActivity, now: number): RunDetail {
  const summary = runSummary(id, store, activity, now);
  const families = [...new Set(store.trials().map((t) => t.family))].sort();
  return {
    ...summary,
    fold_count: runFacts(store).foldCount,
    plan: planOf(store),
    families,
    timeline: activity.timeline.map((p) => ({ ...p, score: p.score === null ? null : finiteOrNull(p.score) })),
    halving_decisions: store.halvingDecisions().length,
    ensembles: store.artifacts("ensemble").length,
    holdout: holdoutOf(store),
  };
}

export function ensemblesOf(store: RunStore): EnsemblesResponse {
  const facts = runFacts(store);
  return {
    run: facts.runId,
    metric: facts.metric,
    direction: facts.direction,
    ensembles: store.artifacts("ensemble").map((a) => ({ name: a.name, created_at: a.createdAt, ...EnsembleSummarySchema.parse(a.data) })),
    holdout: holdoutOf(store),
  };
}

/**
 * One trial: its board row (rank and tie as on the whole board), per-fold results, halving
 * decisions and, when asked, what its out-of-fold predictions say. Null for an unknown trial.
 */
export function trialDetail(store: RunStore, trial: number, query: Pick<TrialQuery, "curves" | "threshold" | "bins" | "strategy" | "positive" | "points">, board: Board = buildBoard(store)): TrialDetail | null {
  const row = board.rows.find((r) => r.trial === trial);
  if (!row) return null;
  const repeats = new Map(store.folds().map((f) => [f.fold, f.repeat]));
  const folds = store
    .foldScores()
    .filter((r) => r.trial === trial)
    .map((r) => ({ fold: r.fold, repeat: repeats.get(r.fold) ?? 0, score: r.score === null ? null : finiteOrNull(r.score), fit_s: r.fitSeconds, predict_s: r.predictSeconds, error: r.error }));
  const halving = store
    .halvingDecisions()
    .filter((d) => d.trial === trial)
    .map((d) => ({ batch: d.batch, rung: d.rung, score: d.score === null ? null : finiteOrNull(d.score), promoted: d.promoted }));
  const diagnostics = query.curves
    ? trialDiagnostics(pooledPredictions(store, runTargets(store.folder), trial), {
        threshold: query.threshold,
        bins: query.bins,
        strategy: query.strategy,
        positive: query.positive,
        points: query.points,
      })
    : null;
  return { run: board.run, metric: board.metric, direction: board.direction, trial, row, folds, halving, diagnostics };
}
