import { z } from "zod";
import { parseParams } from "../params.js";

/** How an offending input is shown inside a message: short, JSON-like. */
function shown(input: unknown): string {
  if (typeof input === "number" || typeof input === "boolean" || input === null) return String(input);
  if (input === undefined) return "nothing";
  const text = JSON.stringify(input);
  return text === undefined ? typeof input : text.length > 40 ? `${text.slice(0, 37)}...` : text;
}

/** A finite number satisfying `ok`; the message states the allowed range and the value given. */
function boundedNumber(range: string, ok: (x: number) => boolean) {
  return z
    .number({ error: (issue) => `must be a number ${range} (got ${shown(issue.input)})` })
    .refine(ok, { error: (issue) => `must be ${range} (got ${shown(issue.input)})` });
}

/** An integer satisfying `ok`, with the same kind of message. */
function boundedInteger(range: string, ok: (x: number) => boolean) {
  return z
    .number({ error: (issue) => `must be an integer ${range} (got ${shown(issue.input)})` })
    .refine((x) => Number.isSafeInteger(x) && ok(x), { error: (issue) => `must be an integer ${range} (got ${shown(issue.input)})` });
}

/**
 * Parameters of the `boosted` family (histogram gradient boosting). Defaults follow common
 * practice for histogram boosting (METHODS.md §6: learning rate 0.1, 31 leaves, 20 rows per
 * leaf, 255 bins, λ = 0, patience 10).
 *
 * `early_stop` is off by default (0): `rounds` is itself searched, and a model whose size
 * silently depends on how many rows a fold has would make trials harder to compare. A value
 * in (0, 0.5] holds out that fraction of the training rows (stratified for classification).
 */
export const BoostedParamsSchema = z.strictObject({
  rounds: boundedInteger("in [1, 10000]", (x) => x >= 1 && x <= 10_000).default(200),
  learning_rate: boundedNumber("> 0 and <= 1", (x) => x > 0 && x <= 1).default(0.1),
  leaves: boundedInteger("in [2, 4096]", (x) => x >= 2 && x <= 4096).default(31),
  depth: boundedInteger(">= 1, or null for no limit", (x) => x >= 1).nullable().default(null),
  min_leaf: boundedInteger(">= 1", (x) => x >= 1).default(20),
  min_hessian: boundedNumber(">= 0", (x) => x >= 0).default(1e-3),
  l2: boundedNumber(">= 0", (x) => x >= 0).default(0),
  min_gain: boundedNumber(">= 0", (x) => x >= 0).default(0),
  row_sample: boundedNumber("> 0 and <= 1", (x) => x > 0 && x <= 1).default(1),
  split_features: boundedNumber("> 0 and <= 1", (x) => x > 0 && x <= 1).default(1),
  bins: boundedInteger("in [2, 255]", (x) => x >= 2 && x <= 255).default(255),
  early_stop: boundedNumber("in [0, 0.5] (0 = off)", (x) => x >= 0 && x <= 0.5).default(0),
  patience: boundedInteger(">= 1", (x) => x >= 1).default(10),
  class_weight: z
    .enum(["none", "balanced"], { error: (issue) => `must be one of none, balanced (got ${shown(issue.input)})` })
    .default("none"),
});

export type BoostedParams = z.infer<typeof BoostedParamsSchema>;

/** Validates user-given parameters and fills defaults; a mistake is a ParamError naming the parameter. */
export function parseBoostedParams(input: unknown): BoostedParams {
  return parseParams("boosted", BoostedParamsSchema, input);
}
