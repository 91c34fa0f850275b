import type { Rng, TableView, TrainView } from "@nightshift/core";
import type { z } from "zod";

/** The families a plan can name (DESIGN.md). `logistic` fits ridge (`linear`) on regression tasks. */
export const FAMILY_NAMES = ["logistic", "tree", "forest", "extra_trees", "boosted", "knn"] as const;
export type FamilyName = (typeof FAMILY_NAMES)[number];

/**
 * A JSON-safe fitted model: plain objects, arrays, numbers, strings, booleans, null.
 * Typed arrays are stored as plain number arrays (or base64 strings) inside it.
 */
export type ModelJson = { readonly family: FamilyName; readonly [key: string]: unknown };

/**
 * Every learner has the same small face. `fit` and `predict` are pure: the only
 * randomness comes from `rng`, nothing is read from or written to the outside.
 *
 * `predict` returns a row-major Float64Array of width `predictionWidth(task, classes)`:
 * class probabilities (rows sum to 1, also for binary: [P(class 0), P(class 1)]) or values.
 */
export interface Learner<Params, Model> {
  readonly family: FamilyName;
  /** Validates and fills defaults; unknown keys are errors. */
  readonly params: z.ZodType<Params>;
  fit(view: TrainView, params: Params, rng: Rng): Model;
  predict(model: Model, view: TableView): Float64Array;
  toJSON(model: Model): ModelJson;
  fromJSON(json: ModelJson): Model;
}

/** A fit that cannot be done (one class, no usable feature...): recorded as a failed trial. */
export class FitError extends Error {
  constructor(family: FamilyName, message: string) {
    super(`${family}: ${message}`);
    this.name = "FitError";
  }
}
