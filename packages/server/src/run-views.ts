import { type Board, buildBoard, EnsembleSummarySchema, type RunFacts, runFacts } from "@nightshift/aggregator";
import { type Task, TaskSchema } from "@nightshift/core";
import type { RunStore, TrialRecord } from "@nightshift/store";
import { emptyActivity, foldEvents, type RunActivity } from "./run-activity.js";
import { type RunCounts, runCounts, runPace } from "./run-progress.js";
import { pooledPredictions, runTargets } from "./run-targets.js";
import {
  type EnsemblesResponse,
  OpenedHoldoutSchema,
  type RunDetail,
  type RunSummary,
  type TrialDetail,
  type TrialQuery,
} from "./schemas.js";
import { finiteOrNull, trialDiagnostics } from "./trial-diagnostics.js";

/*
 * The server's views of one run: the tables read from its store, and plain functions of
 * them, shared by the HTTP routes and the report.
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

/** The small facts of a run: what it measures, its state, when it started. */
export interface RunHead {
  readonly facts: RunFacts;
  readonly task: Task;
  readonly state: string;
  readonly createdAt: string | null;
}

export function readRunHead(store: RunStore): RunHead {
  return {
    facts: runFacts(store),
    task: TaskSchema.parse(store.getMeta("task")),
    state: store.getMeta("state") ?? "created",
    createdAt: store.getMeta("created_at") ?? null,
  };
}

/** What the run views need from a store, read in one go (and cached by the server while the store is unchanged). */
export interface RunTables extends RunHead {
  readonly plan: Record<string, unknown>;
  readonly trials: TrialRecord[];
  readonly results: ReturnType<RunStore["foldScores"]>;
  readonly halvingDecisions: number;
  readonly ensembles: EnsemblesResponse["ensembles"];
  readonly holdout: RunDetail["holdout"];
}

export function readRunTables(store: RunStore): RunTables {
  const holdout = store.artifact("holdout");
  return {
    ...readRunHead(store),
    plan: planOf(store),
    trials: store.trials(),
    results: store.foldScores(),
    halvingDecisions: store.halvingDecisions().length,
    ensembles: store.artifacts("ensemble").map((a) => ({ name: a.name, created_at: a.createdAt, ...EnsembleSummarySchema.parse(a.data) })),
    holdout: holdout ? OpenedHoldoutSchema.parse(holdout.data) : null,
  };
}

/** A run's head and counts: all a summary needs besides its pace, small enough to keep for many runs. */
export interface RunSummaryParts {
  readonly head: RunHead;
  readonly counts: RunCounts;
}

export function summaryParts(tables: RunTables): RunSummaryParts {
  const { facts, plan } = tables;
  const counts = runCounts({ trials: tables.trials, results: tables.results, foldCount: facts.foldCount, halving: plan.halving !== undefined && plan.halving !== null, direction: facts.direction });
  return { head: { facts, task: tables.task, state: tables.state, createdAt: tables.createdAt }, counts };
}

export function runSummary(id: string, parts: RunSummaryParts, activity: Pick<RunActivity, "lastId" | "lastEventAt" | "lastStartAt" | "foldsSinceStart">, now: number): RunSummary {
  const { head, counts } = parts;
  return {
    id,
    metric: head.facts.metric,
    direction: head.facts.direction,
    task: head.task,
    state: head.state,
    created_at: head.createdAt,
    last_event_at: activity.lastEventAt,
    last_event_id: activity.lastId,
    trials: counts.trials,
    progress: runPace(counts, head.state, activity, now),
    best: counts.best,
  };
}

/** The last event of a run and its pace since it last started, read through its whole log once (no timeline kept). */
export function readEventTail(store: RunStore): Omit<RunActivity, "timeline"> {
  const activity = emptyActivity();
  for (;;) {
    const events = store.events(activity.lastId, 1000);
    if (events.length === 0) break;
    foldEvents(activity, events);
    activity.timeline.length = 0;
  }
  const { timeline: _timeline, ...tail } = activity;
  return tail;
}

export function runDetail(id: string, tables: RunTables, activity: RunActivity, now: number): RunDetail {
  return {
    ...runSummary(id, summaryParts(tables), activity, now),
    fold_count: tables.facts.foldCount,
    plan: tables.plan,
    families: [...new Set(tables.trials.map((t) => t.family))].sort(),
    timeline: activity.timeline.map((p) => ({ ...p, score: p.score === null ? null : finiteOrNull(p.score) })),
    halving_decisions: tables.halvingDecisions,
    ensembles: tables.ensembles.length,
    holdout: tables.holdout,
  };
}

export function ensemblesOf(tables: RunTables): EnsemblesResponse {
  const { facts } = tables;
  return { run: facts.runId, metric: facts.metric, direction: facts.direction, ensembles: tables.ensembles, holdout: tables.holdout };
}

/**
 * One trial: its board row (rank and tie as on the whole board), per-fold results, halving
 * decisions and, when asked, what its out-of-fold predictions say (null without the run's
 * dataset pack, which holds their targets). Null for an unknown trial.
 */
export function trialDetail(
  store: RunStore,
  trial: number,
  query: Pick<TrialQuery, "curves" | "threshold" | "bins" | "strategy" | "positive" | "points">,
  board: Board = buildBoard(store),
  results: RunTables["results"] = store.foldScores(),
): TrialDetail | null {
  const row = board.rows.find((r) => r.trial === trial);
  if (!row) return null;
  const repeats = new Map(store.folds().map((f) => [f.fold, f.repeat]));
  const folds = results
    .filter((r) => r.trial === trial)
    .map((r) => ({ fold: r.fold, repeat: repeats.get(r.fold) ?? 0, score: r.score === null ? null : finiteOrNull(r.score), fit_s: r.fitSeconds, predict_s: r.predictSeconds, error: r.error }));
  const halving = store
    .halvingDecisions()
    .filter((d) => d.trial === trial)
    .map((d) => ({ batch: d.batch, rung: d.rung, score: d.score === null ? null : finiteOrNull(d.score), promoted: d.promoted }));
  const targets = query.curves ? runTargets(store.folder) : null;
  const diagnostics = targets
    ? trialDiagnostics(pooledPredictions(store, targets, trial), {
        threshold: query.threshold,
        bins: query.bins,
        strategy: query.strategy,
        positive: query.positive,
        points: query.points,
      })
    : null;
  return { run: board.run, metric: board.metric, direction: board.direction, trial, row, folds, halving, diagnostics };
}
