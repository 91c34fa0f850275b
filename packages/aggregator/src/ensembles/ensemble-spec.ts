import { z } from "zod";

/**
 * How an ensemble turns its members' predictions into one: a weighted average of
 * probabilities or values (greedy selection, soft voting, a single trial), or a stacker
 * (a linear model on the members' logits, log-probabilities or values). The same spec is
 * applied to out-of-fold predictions, to the hold-out and by `nightshift predict`.
 */
export const EnsembleSpecSchema = z.strictObject({
  kind: z.enum(["selection", "stacking", "voting", "single"]),
  /** Member trials and their weights: averaging weights (summing to 1) or stacker coefficients. */
  members: z.array(z.strictObject({ trial: z.number().int().nonnegative(), weight: z.number() })).min(1),
  /** Stacking: the intercept (binary, regression) or one per class (multiclass). */
  intercepts: z.array(z.number()).optional(),
  /** Stacking: the feature each member contributes (logit of P(positive), log of each class probability, the value). */
  link: z.enum(["logit", "log", "identity"]).optional(),
  /** Stacking: probabilities are clipped to [clip, 1 − clip] before logit or log. */
  clip: z.number().positive().max(0.5).optional(),
});
export type EnsembleSpec = z.infer<typeof EnsembleSpecSchema>;
export type EnsembleKind = EnsembleSpec["kind"];
