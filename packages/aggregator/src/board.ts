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

export const EnsembleSummarySchema = z.object({
  kind: z.enum(["selection", "stacking", "voting"]),
  mean: z.number().nullable(),
  std: z.number().nullable(),
  nested: z.object({ mean: z.number().nullable(), std: z.number().nullable() }),
  members: z.array(z.object({ trial: z.number().int(), weight: z.number() })),
  curve: z.array(z.number()),
});

export const BoardSchema = z.object({
  run: z.string(),
  metric: z.string(),
  direction: z.enum(["max", "min"]),
  rows: z.array(BoardRowSchema),
  ensembles: z.array(EnsembleSummarySchema),
  holdout: z
    .object({
      opened_at: z.string(),
      scores: z.array(z.object({ name: z.string(), score: z.number().nullable() })),
    })
    .nullable(),
});

export type BoardRow = z.infer<typeof BoardRowSchema>;
export type EnsembleSummary = z.infer<typeof EnsembleSummarySchema>;
export type Board = z.infer<typeof BoardSchema>;
