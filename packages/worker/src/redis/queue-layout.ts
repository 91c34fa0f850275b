import { InputError } from "@nightshift/core";
import { z } from "zod";

/**
 * What coordinators and workers share on one Redis. Everything lives under a namespace
 * (default `nightshift`), so several teams or test runs can share a Redis without meeting:
 *
 *   <ns>:jobs:*              the BullMQ queue of jobs (every run on this namespace)
 *   <ns>:pack:<sha256>       a dataset pack, content-addressed by its fingerprint
 *   <ns>:run:<run id>        a run's setup: which pack, its folds, its metric
 *   <ns>:worker:<id>         a live worker process and its concurrency (expires unless renewed)
 *
 * A pack is stored once however many runs use it; a second pack of a run (the hold-out
 * rows, opened only at the final step) goes up the same way, under its own fingerprint.
 */
export const DEFAULT_NAMESPACE = "nightshift";
export const JOB_QUEUE = "jobs";
export const FOLD_JOB_NAME = "fold";

const NAMESPACE = /^[A-Za-z0-9][A-Za-z0-9_.-]{0,63}$/;

export function checkNamespace(namespace: string, where = "--namespace"): string {
  if (!NAMESPACE.test(namespace)) throw new InputError(where, `'${namespace}' is not a namespace: use up to 64 letters, digits, '.', '_' or '-'`);
  return namespace;
}

export const packKey = (namespace: string, fingerprint: string): string => `${namespace}:pack:${fingerprint}`;
export const runKey = (namespace: string, run: string): string => `${namespace}:run:${run}`;
export const workerKey = (namespace: string, id: string): string => `${namespace}:worker:${id}`;
export const workerKeyPattern = (namespace: string): string => `${namespace}:worker:*`;

/** A live worker's entry; it expires when the worker stops renewing it. */
export const WorkerEntrySchema = z.strictObject({
  host: z.string().max(200),
  pid: z.number().int().positive(),
  concurrency: z.number().int().positive().max(4096),
  node: z.number().int().positive(),
});
export type WorkerEntry = z.infer<typeof WorkerEntrySchema>;

export const RUN_SETUP_VERSION = "1";

/** The text fields of a run's setup hash; `folds` is binary (see `encodeFolds`). */
const RunSetupTextSchema = z.strictObject({
  schema: z.literal(RUN_SETUP_VERSION),
  dataset: z.string().regex(/^[0-9a-f]{64}$/),
  metric: z.string().regex(/^[a-z0-9_]{1,64}$/),
  node: z.string().regex(/^\d{1,4}$/),
});

/** What a worker needs besides the pack to run any fold job of a run. */
export interface RunSetup {
  readonly dataset: string;
  readonly metric: string;
  /** Node.js major of the coordinator that made the run. */
  readonly node: number;
  /** Test rows of every fold, one after another, in memory every worker thread can read. */
  readonly foldRows: Uint32Array;
  /** Fold f's test rows are foldRows[foldOffsets[f] .. foldOffsets[f + 1]). */
  readonly foldOffsets: readonly number[];
}

/**
 * Folds as little-endian u32: the fold count k, k lengths, then every fold's test rows.
 * Binary, since a million-row run has a million fold entries.
 */
export function encodeFolds(foldTests: readonly Uint32Array[]): Buffer {
  const total = foldTests.reduce((n, t) => n + t.length, 0);
  const out = Buffer.alloc(4 * (1 + foldTests.length + total));
  out.writeUInt32LE(foldTests.length, 0);
  foldTests.forEach((t, i) => out.writeUInt32LE(t.length, 4 * (1 + i)));
  let at = 4 * (1 + foldTests.length);
  for (const t of foldTests) {
    for (let i = 0; i < t.length; i++) out.writeUInt32LE(t[i], at + 4 * i);
    at += 4 * t.length;
  }
  return out;
}

/** The hash fields of a run's setup, as a coordinator writes them. */
export function encodeRunSetup(setup: { dataset: string; metric: string; node: number; foldTests: readonly Uint32Array[] }): Record<string, string | Buffer> {
  return { schema: RUN_SETUP_VERSION, dataset: setup.dataset, metric: setup.metric, node: String(setup.node), folds: encodeFolds(setup.foldTests) };
}

/**
 * Reads a run's setup hash as a worker fetched it (field → bytes). Everything is checked,
 * since it comes from the network: an unreadable setup is an error, never a guess.
 */
export function decodeRunSetup(fields: Record<string, Buffer>): RunSetup {
  const { folds, ...rest } = fields;
  const text = RunSetupTextSchema.safeParse(Object.fromEntries(Object.entries(rest).map(([k, v]) => [k, v.toString("utf8")])));
  if (!text.success) throw new Error(`the run's setup in Redis is not readable: ${text.error.issues.map((i) => `${i.path.join(".") || "(setup)"}: ${i.message}`).join("; ")}`);
  if (folds === undefined || folds.length < 4 || folds.length % 4 !== 0) throw new Error("the run's setup in Redis has no readable folds");
  const k = folds.readUInt32LE(0);
  if (k < 1 || folds.length < 4 * (1 + k)) throw new Error(`the run's setup in Redis has a broken fold table (${k} folds)`);
  const offsets = [0];
  for (let f = 0; f < k; f++) offsets.push(offsets[f] + folds.readUInt32LE(4 * (1 + f)));
  if (folds.length !== 4 * (1 + k + offsets[k])) throw new Error("the run's setup in Redis has fold lengths that do not add up");
  const foldRows = new Uint32Array(new SharedArrayBuffer(4 * offsets[k]));
  for (let i = 0; i < foldRows.length; i++) foldRows[i] = folds.readUInt32LE(4 * (1 + k + i));
  return { dataset: text.data.dataset, metric: text.data.metric, node: Number(text.data.node), foldRows, foldOffsets: offsets };
}
