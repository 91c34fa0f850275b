import { z } from "zod";

/**
 * Hyperparameters of the `knn` family.
 *
 * - `k`: neighbours per prediction (capped at the number of training rows).
 * - `weights`: "uniform" (each neighbour counts once) or "distance" (each counts 1/distance; a
 *   neighbour at distance 0 takes all the weight, shared with any other at distance 0).
 * - `metric`: euclidean distance on the standardised design columns (the only metric so far).
 * - `missing_indicators`: add a 0/1 column per numeric feature with missing training values.
 */
export const KnnParamsSchema = z
  .object({
    k: z.number().int().min(1).max(1000).default(15),
    weights: z.enum(["uniform", "distance"]).default("uniform"),
    metric: z.enum(["euclidean"]).default("euclidean"),
    missing_indicators: z.boolean().default(true),
  })
  .strict();

export type KnnParams = z.infer<typeof KnnParamsSchema>;
