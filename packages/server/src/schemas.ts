import { BoardRowSchema, BoardSchema, EnsembleSummarySchema } from "@nightshift/aggregator";
import { z } from "zod";

/*
 * Every shape the HTTP API answers with or accepts, in one place. The board is the
 * aggregator's BoardSchema (the same object `nightshift board --json` prints), with the
 * paging facts added; the rest are the server's own views of a run store.
 */

export const ErrorResponseSchema = z.object({
  error: z.enum(["bad_request", "unauthorized", "not_found", "too_large", "unavailable", "internal"]),
  message: z.string(),
});
export type ErrorResponse = z.infer<typeof ErrorResponseSchema>;

const count = z.number().int().nonnegative();
/** A JSON number; NaN and ±Infinity (an undefined score, an open-ended threshold) travel as null. */
const finite = z.number().nullable();

export const TrialCountsSchema = z.object({
  total: count,
  done: count,
  pruned: count,
  failed: count,
  timed_out: count,
  running: count,
  queued: count,
});

export const ProgressSchema = z.object({
  folds_done: count,
  /** Fold jobs the run is expected to need; with halving, an estimate from the trials finished so far. */
  folds_planned: count,
  fraction: z.number().min(0).max(1),
  /** Seconds since the run last started or resumed (null before its first start event). */
  running_s: finite,
  folds_per_s: finite,
  /** Seconds left at the current pace; null when the run is not running or no fold has finished yet. */
  eta_s: finite,
});

export const BestSchema = z.object({ trial: z.number().int().nonnegative(), score: z.number() }).nullable();

export const RunSummarySchema = z.object({
  id: z.string(),
  metric: z.string(),
  direction: z.enum(["max", "min"]),
  task: z.enum(["binary", "multiclass", "regression"]),
  state: z.string(),
  created_at: z.string().nullable(),
  last_event_at: z.string().nullable(),
  /** Id of the newest stored event: a client streams events after it. */
  last_event_id: count,
  trials: TrialCountsSchema,
  progress: ProgressSchema,
  best: BestSchema,
});
export type RunSummary = z.infer<typeof RunSummarySchema>;

export const RunListSchema = z.object({ runs: z.array(RunSummarySchema) });
export type RunList = z.infer<typeof RunListSchema>;

export const TimelinePointSchema = z.object({
  at: z.string(),
  trial: z.number().int().nonnegative(),
  family: z.string(),
  score: finite,
});
export type TimelinePoint = z.infer<typeof TimelinePointSchema>;

/** The hold-out opening as the board carries it (null while sealed). */
export const OpenedHoldoutSchema = BoardSchema.shape.holdout;

export const RunDetailSchema = RunSummarySchema.extend({
  fold_count: count,
  plan: z.record(z.string(), z.unknown()),
  families: z.array(z.string()),
  /** Finished trials in the order they finished, for best-score-so-far against time. */
  timeline: z.array(TimelinePointSchema),
  halving_decisions: count,
  ensembles: count,
  holdout: OpenedHoldoutSchema,
});
export type RunDetail = z.infer<typeof RunDetailSchema>;

export const BOARD_SORT_KEYS = ["rank", "trial", "family", "status", "mean", "std", "fit_s", "predict_s"] as const;
export type BoardSortKey = (typeof BOARD_SORT_KEYS)[number];
export const MAX_BOARD_LIMIT = 10_000;

const flag = z.enum(["true", "false", "1", "0"]).transform((v) => v === "true" || v === "1");
const integerText = (min: number, max: number) =>
  z
    .string()
    .regex(/^\d{1,15}$/, "must be a whole number")
    .transform(Number)
    .pipe(z.number().int().min(min).max(max));
const numberText = (min: number, max: number) =>
  z
    .string()
    .regex(/^-?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/, "must be a number")
    .transform(Number)
    .pipe(z.number().min(min).max(max));

/** Query of `GET /api/runs/:id/board`; unknown keys are errors so a typo is not silently ignored. */
export const BoardQuerySchema = z.strictObject({
  family: z.string().regex(/^[a-z_]{1,32}$/, "must be a family name").optional(),
  sort: z.enum(BOARD_SORT_KEYS).default("rank"),
  order: z.enum(["asc", "desc"]).optional(),
  limit: integerText(1, MAX_BOARD_LIMIT).default(50),
  offset: integerText(0, 1_000_000_000).default(0),
  token: z.string().optional(),
});
export type BoardQuery = z.infer<typeof BoardQuerySchema>;

export const BoardPageSchema = BoardSchema.extend({
  /** Rows after the family filter, before paging. */
  total: count,
  offset: count,
  limit: count,
  sort: z.enum(BOARD_SORT_KEYS),
  order: z.enum(["asc", "desc"]),
  /** Every family of the run, for a filter control. */
  families: z.array(z.string()),
});
export type BoardPage = z.infer<typeof BoardPageSchema>;

export const TrialQuerySchema = z.strictObject({
  curves: flag.default(false),
  /** A row is called positive when its predicted probability is at least this. */
  threshold: numberText(0, 1).default(0.5),
  bins: integerText(2, 50).default(10),
  strategy: z.enum(["uniform", "quantile"]).default("uniform"),
  /** Class index scored one-vs-rest for the curves of a multiclass run (binary: always class 1). */
  positive: integerText(0, 10_000).optional(),
  points: integerText(10, 5000).default(400),
  token: z.string().optional(),
});
export type TrialQuery = z.infer<typeof TrialQuerySchema>;

const CurveSchema = z.object({ x: z.array(finite), y: z.array(finite), thresholds: z.array(finite) });

export const ConfusionSchema = z.object({
  /** null for a multiclass matrix, where each row goes to its most probable class. */
  threshold: finite,
  labels: z.array(z.string()),
  /** Rows are true classes, columns predicted classes. */
  matrix: z.array(z.array(count)),
  accuracy: finite,
  /** Of the positive class (for multiclass, the class scored one-vs-rest, read off the matrix). */
  precision: finite,
  recall: finite,
  f1: finite,
});

export const TrialDiagnosticsSchema = z.object({
  task: z.enum(["binary", "multiclass", "regression"]),
  /** Out-of-fold predictions pooled over the folds listed (a row appears once per repeat). */
  rows: count,
  folds: z.array(z.number().int().nonnegative()),
  classification: z
    .object({
      positive: z.object({ index: z.number().int().nonnegative(), label: z.string(), rows: count }),
      /** x = recall, y = precision; thinned to the requested number of points for drawing. */
      precision_recall: CurveSchema,
      average_precision: finite,
      /** x = false positive rate, y = true positive rate. */
      roc: CurveSchema,
      roc_auc: finite,
      calibration: z.object({
        strategy: z.enum(["uniform", "quantile"]),
        bins: z.number().int().positive(),
        mean_predicted: z.array(finite),
        fraction_positive: z.array(finite),
        count: z.array(count),
        expected_calibration_error: finite,
      }),
      confusion: ConfusionSchema,
    })
    .nullable(),
  regression: z
    .object({
      /** Actual against predicted, thinned to the requested number of points for drawing. */
      actual: z.array(finite),
      predicted: z.array(finite),
      rmse: finite,
      mae: finite,
      r2: finite,
    })
    .nullable(),
});
export type TrialDiagnostics = z.infer<typeof TrialDiagnosticsSchema>;

export const TrialDetailSchema = z.object({
  run: z.string(),
  metric: z.string(),
  direction: z.enum(["max", "min"]),
  trial: z.number().int().nonnegative(),
  row: BoardRowSchema,
  folds: z.array(
    z.object({
      fold: z.number().int().nonnegative(),
      repeat: z.number().int().nonnegative(),
      score: finite,
      fit_s: z.number(),
      predict_s: z.number(),
      error: z.string().nullable(),
    }),
  ),
  halving: z.array(z.object({ batch: count, rung: count, score: finite, promoted: z.boolean() })),
  diagnostics: TrialDiagnosticsSchema.nullable(),
});
export type TrialDetail = z.infer<typeof TrialDetailSchema>;

export const StoredEnsembleSchema = EnsembleSummarySchema.extend({ name: z.string(), created_at: z.string() });

export const EnsemblesResponseSchema = z.object({
  run: z.string(),
  metric: z.string(),
  direction: z.enum(["max", "min"]),
  ensembles: z.array(StoredEnsembleSchema),
  holdout: OpenedHoldoutSchema,
});
export type EnsemblesResponse = z.infer<typeof EnsemblesResponseSchema>;

export const EventsQuerySchema = z.strictObject({
  /** Send the stored events after this id first (a reconnecting EventSource sends Last-Event-ID instead). */
  after: integerText(0, Number.MAX_SAFE_INTEGER).optional(),
  kinds: z
    .string()
    .regex(/^[a-z_]+(,[a-z_]+)*$/, "must be a comma-separated list of event kinds")
    .optional(),
  token: z.string().optional(),
});

/** Queries of routes that take none but the token. */
export const EmptyQuerySchema = z.strictObject({ token: z.string().optional() });
