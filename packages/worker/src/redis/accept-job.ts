import { type Job, JOB_SCHEMA_VERSION, JobSchema } from "@nightshift/core";
import { learnerFor } from "@nightshift/learners";
import { otherNodeMajor } from "../node-major.js";

/** A job a worker will not run; its message says why, and the job fails without retries. */
export class RefusedJob extends Error {
  constructor(reason: string) {
    super(`refused: ${reason}`);
    this.name = "RefusedJob";
  }
}

/** How a refusal says the coordinator and this worker run different versions (no worker of this version can run the job). */
const VERSIONS_DIFFER = "versions differ: ";

/** A refused job's failure reason says the worker and the coordinator that queued it run different versions. */
export function isVersionRefusal(reason: string): boolean {
  return reason.startsWith(`refused: ${VERSIONS_DIFFER}`);
}

/** The job schema a payload claims, when it is another than this worker's; null when it is this one or not a number. */
function otherJobSchema(raw: unknown): string | null {
  const schema = raw !== null && typeof raw === "object" ? (raw as { schema?: unknown }).schema : undefined;
  if (typeof schema !== "number" || schema === JOB_SCHEMA_VERSION) return null;
  return schema > JOB_SCHEMA_VERSION
    ? `job schema ${schema} is newer than this worker's ${JOB_SCHEMA_VERSION} (the coordinator that queued it runs a newer nightshift): update nightshift on this worker's box`
    : `job schema ${schema} is older than this worker's ${JOB_SCHEMA_VERSION} (the coordinator that queued it runs an older nightshift): update nightshift where the coordinator runs, or serve it with workers of its version`;
}

/**
 * The edge where a job from the queue becomes something a worker may run (DESIGN.md
 * contract 4: workers run data, not code). The payload must match the shared job schema
 * exactly (unknown keys, `__proto__` included, are refused), come from this Node.js
 * major, and carry parameters the family's own schema accepts. Nothing in a job is
 * evaluated; a refused job never reaches a thread.
 *
 * The one schema checked here is the job union (`JobSchema`: fold and refit jobs), and
 * `fold-thread.ts` runs what it accepts through the one dispatch, `runJob`.
 */
export function acceptJob(raw: unknown): Job {
  // Schemas may drop a "__proto__" key silently (a record does); a job carrying one is refused outright.
  const protoAt = protoKeyPath(raw, []);
  if (protoAt !== null) throw new RefusedJob(`the job has a "__proto__" key at ${protoAt.length > 0 ? protoAt.join(".") : "its top level"}`);
  const otherSchema = otherJobSchema(raw);
  if (otherSchema !== null) throw new RefusedJob(VERSIONS_DIFFER + otherSchema);
  const parsed = JobSchema.safeParse(raw);
  if (!parsed.success) throw new RefusedJob(`the job does not match the job schema: ${parsed.error.issues.map((i) => `${i.path.join(".") || "(job)"}: ${i.message}`).join("; ")}`);
  const job = parsed.data;
  const otherNode = otherNodeMajor(job.node);
  if (otherNode !== null) throw new RefusedJob(VERSIONS_DIFFER + otherNode);
  try {
    learnerFor(job.family).parseParams(job.params);
  } catch (error) {
    throw new RefusedJob(`bad parameters: ${error instanceof Error ? error.message : String(error)}`);
  }
  return job;
}

/** Path of the first own "__proto__" key in parsed JSON, or null. */
function protoKeyPath(value: unknown, path: string[]): string[] | null {
  if (value === null || typeof value !== "object") return null;
  if (Object.prototype.hasOwnProperty.call(value, "__proto__")) return path;
  for (const [key, inner] of Object.entries(value)) {
    const found = protoKeyPath(inner, [...path, key]);
    if (found !== null) return found;
  }
  return null;
}
