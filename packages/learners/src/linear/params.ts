import { z } from "zod";

/**
 * Hyperparameters of the `logistic` family (and of ridge, which it fits on regression tasks).
 *
 * - `l2`: weight of the penalty (l2 / 2)·‖W‖² next to the summed (weighted) loss over the n
 *   training rows, intercept excluded. The fit minimises the same objective divided by n:
 *     logistic: (1/n) Σ s_i·logloss_i + (l2 / 2n)·‖W‖²
 *     ridge:    (1/2n) Σ (y_i − ŷ_i)² + (l2 / 2n)·‖w‖²
 *   so l2 = 1 / C of scikit-learn's LogisticRegression and l2 = alpha of its Ridge, on
 *   standardised features; the default 1 matches their defaults.
 * - `class_weight`: "balanced" weights each row by n / (C · n_class); no effect on regression.
 * - `max_iterations`, `tolerance`: L-BFGS stops when ‖∇f‖∞ ≤ tolerance · ‖∇f(0)‖∞ or after
 *   max_iterations; ridge is solved in closed form and ignores both.
 * - `missing_indicators`: add a 0/1 column per numeric feature with missing training values.
 */
export const LogisticParamsSchema = z
  .object({
    l2: z.number().min(0).default(1),
    class_weight: z.enum(["none", "balanced"]).default("none"),
    max_iterations: z.number().int().min(1).max(100_000).default(500),
    tolerance: z.number().gt(0).lt(1).default(1e-6),
    missing_indicators: z.boolean().default(true),
  })
  .strict();

export type LogisticParams = z.infer<typeof LogisticParamsSchema>;
