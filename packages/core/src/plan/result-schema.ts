import { z } from "zod";
import { FamilyNameSchema } from "./families.js";

/**
 * What a remote worker sends back for a fold job. The coordinator validates it before
 * anything reaches the run store, as workers validate jobs (DESIGN.md contract 4).
 * Out-of-fold predictions travel as base64 of their little-endian float32 bytes: a third
 * larger than the raw bytes, against about three times for a JSON list of decimals, and
 * every value arrives bit for bit.
 */
export const RESULT_SCHEMA_VERSION = 1;

export const FoldResultSchema = z
  .strictObject({
    schema: z.literal(RESULT_SCHEMA_VERSION),
    trial: z.number().int().nonnegative(),
    fold: z.number().int().nonnegative(),
    score: z.number().nullable(),
    outOfFold: z.base64().nullable(),
    fitSeconds: z.number().nonnegative(),
    predictSeconds: z.number().nonnegative(),
    error: z.string().max(20_000).nullable(),
    /** Which worker process ran it (host and process id), for the run's events. */
    worker: z.string().max(200),
  })
  .refine((r) => r.error !== null || (r.score !== null && r.outOfFold !== null), { message: "a result without an error must carry a score and predictions" });
export type FoldResult = z.infer<typeof FoldResultSchema>;

/**
 * What a remote worker sends back for a refit job: the model fitted on all training rows, as
 * its family's plain JSON (data the family's `fromJSON` reads, never code), or the error.
 */
export const RefitResultSchema = z
  .strictObject({
    schema: z.literal(RESULT_SCHEMA_VERSION),
    kind: z.literal("refit"),
    trial: z.number().int().nonnegative(),
    model: z.looseObject({ family: FamilyNameSchema }).nullable(),
    fitSeconds: z.number().nonnegative(),
    error: z.string().max(20_000).nullable(),
    worker: z.string().max(200),
  })
  .refine((r) => r.error !== null || r.model !== null, { message: "a refit result without an error must carry a model" });
export type RefitResult = z.infer<typeof RefitResultSchema>;

/** Any result a remote worker sends back (the job's kind says which one to expect). */
export const JobResultSchema = z.union([FoldResultSchema, RefitResultSchema]);
export type JobResult = z.infer<typeof JobResultSchema>;

const littleEndian = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

export function float32ToBase64(values: Float32Array): string {
  if (!littleEndian) throw new Error("predictions travel as little-endian float32; this machine is big-endian");
  return Buffer.from(values.buffer, values.byteOffset, values.byteLength).toString("base64");
}

export function float32FromBase64(text: string): Float32Array {
  if (!littleEndian) throw new Error("predictions travel as little-endian float32; this machine is big-endian");
  const bytes = Buffer.from(text, "base64");
  if (bytes.length % 4 !== 0) throw new Error(`${bytes.length} bytes of predictions is not a whole number of float32 values`);
  // A fresh buffer: Buffer.from may hand back a slice of a shared pool at any offset.
  const out = new Float32Array(bytes.length / 4);
  new Uint8Array(out.buffer).set(bytes);
  return out;
}
