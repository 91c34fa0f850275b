import { z } from "zod";
import { FamilyNameSchema } from "./families.js";

/**
 * The fold job: what a worker is asked to do. Workers run data, not code (DESIGN.md
 * contract 4): a job names a family and parameter values, validated here and again by
 * the family's own parameter schema; nothing in it is ever evaluated.
 */
export const JOB_SCHEMA_VERSION = 1;

/** Node.js major version of this process; fold results are promised identical only within one major. */
export const NODE_MAJOR = Number(process.versions.node.split(".")[0]);

const ConstantSchema = z.union([z.number(), z.string().max(200), z.boolean(), z.null()]);

export const FoldJobSchema = z.strictObject({
  schema: z.literal(JOB_SCHEMA_VERSION),
  node: z.number().int().positive(),
  run: z.string().regex(/^[A-Za-z0-9][A-Za-z0-9_.-]{0,127}$/),
  dataset: z.string().regex(/^[0-9a-f]{64}$/),
  seed: z.number().int().nonnegative(),
  trial: z.number().int().nonnegative(),
  fold: z.number().int().nonnegative(),
  family: FamilyNameSchema,
  params: z.record(z.string().regex(/^[a-z][a-z0-9_]{0,63}$/), ConstantSchema),
  timeoutSeconds: z.number().positive().nullable(),
});
export type FoldJob = z.infer<typeof FoldJobSchema>;

/** Stable job id: run/trial/fold, so queueing the same job twice is harmless. */
export function foldJobId(run: string, trial: number, fold: number): string {
  return `${run}.t${trial}.f${fold}`;
}
