import { availableParallelism, hostname } from "node:os";
import { type FoldResult, float32ToBase64, type Job as NightshiftJob, NODE_MAJOR, type RefitResult, RESULT_SCHEMA_VERSION } from "@nightshift/core";
import { type Job, UnrecoverableError, WaitingError, Worker } from "bullmq";
import { Redis } from "ioredis";
import { Piscina } from "piscina";
import { isRefitOutcome, type JobOutcome } from "../run-job.js";
import { timeLimitMessage } from "../time-limit.js";
import { acceptJob, isVersionRefusal, RefusedJob } from "./accept-job.js";
import type { FoldTask } from "./fold-thread.js";
import { defaultCacheDir, PackCache } from "./pack-cache.js";
import { checkNamespace, DEFAULT_NAMESPACE, decodeRunSetup, JOB_QUEUE, type RunSetup, runKey, type WorkerEntry, workerKey } from "./queue-layout.js";
import { queueConnection, type RedisEndpoint } from "./redis-url.js";
import { isConnectionError, watchRedis } from "./redis-watch.js";

/** Path of the queue worker's thread task module (compiled JavaScript in dist/). */
export const FOLD_THREAD_ENTRY = new URL("./fold-thread.js", import.meta.url);

export interface QueueWorkerOptions {
  readonly endpoint: RedisEndpoint;
  readonly namespace?: string;
  /** Fold jobs run at once on this box, one thread each; default: one per CPU. */
  readonly concurrency?: number;
  /** Where fetched dataset packs are kept; default `defaultCacheDir()`. */
  readonly cacheDir?: string;
  /**
   * How long a job stays locked without renewal. The lock is renewed every half of it
   * while a fit runs (fits run on threads, so the renewal is never starved); a worker that
   * dies loses its lock after this long and another worker takes the job over.
   */
  readonly lockSeconds?: number;
  readonly log?: (line: string) => void;
}

export interface QueueWorker {
  readonly id: string;
  readonly concurrency: number;
  /** Stops taking jobs, lets the jobs in progress finish, and closes. */
  stop(): Promise<void>;
  /** Stops the fits in progress and hands their jobs back to the queue at once, then closes. */
  release(): Promise<void>;
  /** Resolves once the worker is closed, by `stop` or `release`. */
  readonly closed: Promise<void>;
}

/** Transient trouble (Redis unreachable, a pack or setup not there yet) is retried with backoff. */
export const JOB_ATTEMPTS = 5;
export const RETRY_DELAY_MS = 2000;
const HEARTBEAT_MS = 5000;

/**
 * A worker process's queue side: takes jobs of every run on its Redis namespace, checks
 * them (`acceptJob`), fetches what the run needs (pack and folds, cached), and runs the
 * fit on a thread of its own pool (compiled `dist/redis/fold-thread.js`). The main thread
 * only waits, so BullMQ renews job locks during the longest fit: the guarantee BullMQ's
 * sandboxed processors give, kept with a thread pool of our own for two reasons. A fit over
 * its time limit must be stopped, and only ending its thread stops a synchronous fit
 * (BullMQ 6.7's sandbox cancellation aborts a signal the fit would never look at). And
 * every thread reads the one copy of the pack the process holds, in a SharedArrayBuffer,
 * where sandboxed processors each hold their own. Threads die with their process, so a
 * killed worker leaves no fit running behind it.
 *
 * Outcomes:
 * - a refused job (not valid, another Node.js major, bad parameters) fails at once, never run;
 * - a fit that fails or times out is a normal result carrying its error (it would fail
 *   the same way anywhere, so it is not retried);
 * - transient trouble throws, and BullMQ tries again with backoff (`JOB_ATTEMPTS`).
 */
export async function startQueueWorker(options: QueueWorkerOptions): Promise<QueueWorker> {
  const namespace = checkNamespace(options.namespace ?? DEFAULT_NAMESPACE);
  const concurrency = Math.max(1, Math.floor(options.concurrency ?? availableParallelism()));
  const lockMs = Math.round((options.lockSeconds ?? 30) * 1000);
  const log = options.log ?? ((line: string) => console.error(line));
  const id = `${hostname()}-${process.pid}`;
  const redis = new Redis({ ...options.endpoint.options, maxRetriesPerRequest: 3 });
  redis.on("error", quietly(log, "redis"));
  // Says when Redis stops answering and when it is back; the connections wait and reconnect meanwhile.
  const watch = watchRedis(options.endpoint, (message) => log(`nightshift worker: ${message}`));
  const packs = new PackCache(redis, namespace, options.cacheDir ?? defaultCacheDir());
  const setups = new Map<string, Promise<RunSetup>>();
  const checkedFolds = new Set<string>();
  const threads = new Piscina({
    filename: FOLD_THREAD_ENTRY.href,
    minThreads: concurrency,
    maxThreads: concurrency,
    concurrentTasksPerWorker: 1,
    idleTimeout: 60_000,
  });
  const inProgress = new Map<string, AbortController>();
  let releasing = false;

  const setupOf = (run: string): Promise<RunSetup> => {
    let pending = setups.get(run);
    if (!pending) {
      pending = redis.hgetallBuffer(runKey(namespace, run)).then((fields) => {
        if (Object.keys(fields).length === 0) throw new Error(`run ${run} has no setup in Redis (yet)`);
        return decodeRunSetup(fields);
      });
      // A failed fetch is not remembered: the next attempt asks Redis again.
      pending.catch(() => setups.delete(run));
      setups.set(run, pending);
      if (setups.size > 32) setups.delete(setups.keys().next().value as string);
    }
    return pending;
  };

  const runOnThread = async (jobId: string, task: FoldTask): Promise<JobOutcome | "released"> => {
    const { job } = task;
    const controller = new AbortController();
    inProgress.set(jobId, controller);
    let timedOut = false;
    const timer =
      job.timeoutSeconds === null
        ? undefined
        : setTimeout(() => {
            timedOut = true;
            controller.abort();
          }, job.timeoutSeconds * 1000);
    try {
      return (await threads.run(task, { signal: controller.signal })) as JobOutcome;
    } catch (error) {
      if (timedOut) return failedOutcome(job, `timed out: ${timeLimitMessage(job.timeoutSeconds ?? 0)}`, job.timeoutSeconds ?? 0);
      if (releasing) return "released";
      return failedOutcome(job, error instanceof Error ? error.message : String(error));
    } finally {
      clearTimeout(timer);
      inProgress.delete(jobId);
    }
  };

  const processJob = async (queued: Job, token?: string): Promise<FoldResult | RefitResult> => {
    let job: NightshiftJob;
    try {
      job = acceptJob(queued.data);
    } catch (error) {
      if (!(error instanceof RefusedJob)) throw error;
      log(`nightshift worker: job ${queued.id}: ${error.message}`);
      // The coordinator's user learns which box to update.
      throw new UnrecoverableError(isVersionRefusal(error.message) ? `${error.message} (worker ${id})` : error.message);
    }
    const setup = await setupOf(job.run);
    if (setup.dataset !== job.dataset) throw new UnrecoverableError(`refused: the job names dataset ${job.dataset.slice(0, 12)}, its run uses ${setup.dataset.slice(0, 12)}`);
    const pack = await packs.get(setup.dataset);
    const contextKey = `${job.run}/${setup.dataset}`;
    if (!checkedFolds.has(contextKey)) {
      let largest = 0;
      for (let i = 0; i < setup.foldRows.length; i++) if (setup.foldRows[i] > largest) largest = setup.foldRows[i];
      if (largest >= pack.rowCount) throw new UnrecoverableError(`refused: the run's folds name row ${largest}, its dataset has ${pack.rowCount} rows`);
      checkedFolds.add(contextKey);
    }
    const outcome = releasing
      ? "released"
      : await runOnThread(String(queued.id), { contextKey, pack: pack.bytes, foldRows: setup.foldRows, foldOffsets: setup.foldOffsets, metric: setup.metric, job });
    if (outcome === "released") {
      await queued.moveToWait(token);
      throw new WaitingError();
    }
    if (isRefitOutcome(outcome))
      return { schema: RESULT_SCHEMA_VERSION, kind: "refit", trial: outcome.trial, model: outcome.error === null ? outcome.model : null, fitSeconds: outcome.fitSeconds, error: outcome.error, worker: id };
    return {
      schema: RESULT_SCHEMA_VERSION,
      trial: outcome.trial,
      fold: outcome.fold,
      score: outcome.error === null ? outcome.score : null,
      outOfFold: outcome.error === null && outcome.outOfFold ? float32ToBase64(outcome.outOfFold) : null,
      fitSeconds: outcome.fitSeconds,
      predictSeconds: outcome.predictSeconds,
      error: outcome.error,
      worker: id,
    };
  };

  const worker = new Worker(JOB_QUEUE, processJob, {
    connection: queueConnection(options.endpoint),
    prefix: namespace,
    concurrency,
    name: id,
    lockDuration: lockMs,
    stalledInterval: lockMs,
    // A job whose worker died twice (an out-of-memory kill, say) fails instead of killing a third.
    maxStalledCount: 2,
  });
  worker.on("error", quietly(log, "queue"));
  await worker.waitUntilReady();

  const entry: WorkerEntry = { host: hostname(), pid: process.pid, concurrency, node: NODE_MAJOR };
  const beat = (): Promise<unknown> => redis.set(workerKey(namespace, id), JSON.stringify(entry), "PX", 3 * HEARTBEAT_MS).catch(() => undefined);
  await beat();
  const heartbeat = setInterval(beat, HEARTBEAT_MS);

  let closing: Promise<void> | undefined;
  let markClosed: () => void = () => undefined;
  const closed = new Promise<void>((resolve) => (markClosed = resolve));
  const close = (): Promise<void> => {
    closing ??= (async () => {
      clearInterval(heartbeat);
      watch.stop();
      await worker.close();
      await redis.del(workerKey(namespace, id)).catch(() => undefined);
      await threads.destroy();
      redis.disconnect();
      markClosed();
    })();
    return closing;
  };
  return {
    id,
    concurrency,
    closed,
    stop: close,
    async release() {
      releasing = true;
      for (const controller of inProgress.values()) controller.abort();
      await close();
    },
  };
}

function failedOutcome(job: NightshiftJob, message: string, fitSeconds = 0): JobOutcome {
  if (job.kind === "refit") return { kind: "refit", trial: job.trial, model: null, fitSeconds, error: message };
  return { trial: job.trial, fold: job.fold, score: null, outOfFold: null, fitSeconds, predictSeconds: 0, error: message };
}

/** Logs trouble once per message and minute: a Redis restart is news, not a flood (and a lost connection is the watch's to tell). */
function quietly(log: (line: string) => void, what: string): (error: Error) => void {
  const last = new Map<string, number>();
  return (error) => {
    if (isConnectionError(error)) return;
    // Redis out of reach for longer than the lock, most likely: the job went back to the queue, and this result is not taken.
    const lapsed = /^Missing lock for job (\S+?)\.? move/.exec(error.message);
    const message = lapsed ? `job ${lapsed[1]}: its lock lapsed (Redis out of reach for longer than --lock-seconds?); the job went back to the queue and runs again` : error.message;
    const now = Date.now();
    if ((last.get(message) ?? 0) > now - 60_000) return;
    last.set(message, now);
    log(lapsed ? `nightshift worker: ${message}` : `nightshift worker: ${what}: ${message}`);
  };
}
