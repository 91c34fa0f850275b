import type { Rng, TableView, TrainView } from "@nightshift/core";
import type { z } from "zod";

import type { FamilyName } from "@nightshift/core";

export { FAMILY_NAMES, type FamilyName } from "@nightshift/core";

/**
 * What the runner offers a fit beyond its data: a memo shared by the fits of one worker,
 * where fold-specific preprocessing (bins, scaling) fitted on the same training rows is
 * kept and reused. `key` names the training rows (e.g. the fold), so memo keys are
 * `${key}:...`. A learner that finds nothing there computes it, exactly as it would without.
 */
export interface FitContext {
  readonly memo: Map<string, unknown>;
  readonly key: string;
}

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
  fit(view: TrainView, params: Params, rng: Rng, context?: FitContext): Model;
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
