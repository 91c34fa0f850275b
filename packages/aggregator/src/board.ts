import { z } from "zod";

/** `nightshift board --json`, `run --json` and the HTTP board: one schema (DESIGN.md). */
export const BoardRowSchema = z.object({
  rank: z.number().int().positive(),
  trial: z.number().int().nonnegative(),
  family: z.string(),
  params: z.record(z.string(), z.unknown()),
  mean: z.number().nullable(),
  std: z.number().nullable(),
  folds: z.array(z.number().nullable()),
  fit_s: z.number().nullable(),
  predict_s: z.number().nullable(),
  status: z.enum(["done", "pruned", "failed", "timed_out", "running", "queued"]),
  tie_with_best: z.boolean(),
  message: z.string().nullable().optional(),
});

/**
 * An ensemble on the board. `mean`/`std`: its score on the out-of-fold rows it was fitted on,
 * per outer fold (optimistic: weights or stacker were chosen on those rows). `nested`: the
 * honest estimate, the same pipeline fitted without each outer fold and scored on it, with
 * whether it is tied with the best single trial (corrected resampled t-test). `curve`: the
 * greedy selection's hillclimb score after each round (empty for the other kinds).
 */
export const EnsembleSummarySchema = z.object({
  kind: z.enum(["selection", "stacking", "voting"]),
  mean: z.number().nullable(),
  std: z.number().nullable(),
  nested: z.object({
    mean: z.number().nullable(),
    std: z.number().nullable(),
    folds: z.array(z.number().nullable()).optional(),
    tie_with_best: z.boolean().optional(),
    p_value: z.number().nullable().optional(),
  }),
  members: z.array(z.object({ trial: z.number().int(), weight: z.number() })),
  curve: z.array(z.number().nullable()),
  intercepts: z.array(z.number()).optional(),
  /** How many finished trials it chose its members from. */
  candidates: z.number().int().optional(),
  /** Whether this is the exported predictor (chosen by the nested estimate, never by the hold-out). */
  final: z.boolean().optional(),
  note: z.string().optional(),
});

/** Permutation importance of the exported predictor on the hold-out (Breiman 2001; Fisher, Rudin & Dominici 2019). */
export const ImportanceSchema = z.object({
  predictor: z.string(),
  metric: z.string(),
  repeats: z.number().int().positive(),
  rows: z.number().int().nonnegative(),
  baseline: z.number().nullable(),
  features: z.array(z.object({ name: z.string(), mean: z.number().nullable(), std: z.number().nullable() })),
});

/** The hold-out opening: when, which predictor was exported, and every candidate's score on the sealed rows. */
export const HoldoutSchema = z.object({
  opened_at: z.string(),
  scores: z.array(z.object({ name: z.string(), score: z.number().nullable() })),
  rows: z.number().int().nonnegative().optional(),
  final: z.string().optional(),
});

export const BoardSchema = z.object({
  run: z.string(),
  metric: z.string(),
  direction: z.enum(["max", "min"]),
  rows: z.array(BoardRowSchema),
  ensembles: z.array(EnsembleSummarySchema),
  holdout: HoldoutSchema.nullable(),
  importance: ImportanceSchema.nullable().optional(),
});

export type BoardRow = z.infer<typeof BoardRowSchema>;
export type EnsembleSummary = z.infer<typeof EnsembleSummarySchema>;
export type Board = z.infer<typeof BoardSchema>;
export type Importance = z.infer<typeof ImportanceSchema>;
export type Holdout = z.infer<typeof HoldoutSchema>;
