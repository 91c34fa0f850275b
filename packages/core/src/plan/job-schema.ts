import { z } from "zod";
import { FamilyNameSchema } from "./families.js";

/**
 * The jobs a worker is asked to do. Workers run data, not code (DESIGN.md contract 4): a job
 * names a family and parameter values, validated here and again by the family's own parameter
 * schema; nothing in it is ever evaluated.
 */
export const JOB_SCHEMA_VERSION = 1;

/** Node.js major version of this process; fold results are promised identical only within one major. */
export const NODE_MAJOR = Number(process.versions.node.split(".")[0]);

const ConstantSchema = z.union([z.number(), z.string().max(200), z.boolean(), z.null()]);

/** What every job carries: who made it, for which run and data, and which configuration. */
const jobFields = {
  schema: z.literal(JOB_SCHEMA_VERSION),
  node: z.number().int().positive(),
  run: z.string().regex(/^[A-Za-z0-9][A-Za-z0-9_.-]{0,127}$/),
  dataset: z.string().regex(/^[0-9a-f]{64}$/),
  seed: z.number().int().nonnegative(),
  trial: z.number().int().nonnegative(),
  family: FamilyNameSchema,
  params: z.record(z.string().regex(/^[a-z][a-z0-9_]{0,63}$/), ConstantSchema),
  timeoutSeconds: z.number().positive().nullable(),
};

/** Fit a trial on the other folds and predict one fold. `kind` may be left out (jobs made before refits existed). */
export const FoldJobSchema = z.strictObject({
  ...jobFields,
  kind: z.literal("fold").optional(),
  fold: z.number().int().nonnegative(),
});
export type FoldJob = z.infer<typeof FoldJobSchema>;

/** The run's final step: fit a trial once more on every training row and return the fitted model. */
export const RefitJobSchema = z.strictObject({
  ...jobFields,
  kind: z.literal("refit"),
});
export type RefitJob = z.infer<typeof RefitJobSchema>;

/** Any job a worker accepts; a worker dispatches on `kind` (a job's problems are reported against the schema its kind names). */
export const JobSchema = z.discriminatedUnion("kind", [FoldJobSchema, RefitJobSchema]);
export type Job = z.infer<typeof JobSchema>;

export function isRefitJob(job: Job): job is RefitJob {
  return job.kind === "refit";
}

/** Stable job id: run/trial/fold, so queueing the same job twice is harmless. */
export function foldJobId(run: string, trial: number, fold: number): string {
  return `${run}.t${trial}.f${fold}`;
}

/** Stable id of a trial's refit job. */
export function refitJobId(run: string, trial: number): string {
  return `${run}.t${trial}.refit`;
}
