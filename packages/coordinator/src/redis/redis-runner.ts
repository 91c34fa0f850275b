import { type FoldJob, float32FromBase64, FoldResultSchema, foldJobId, isRefitJob, type Job, NODE_MAJOR, type RefitJob, RefitResultSchema, refitJobId, unpackDataset } from "@nightshift/core";
import type { ModelJson } from "@nightshift/learners";
import {
  checkNamespace,
  DEFAULT_NAMESPACE,
  encodeRunSetup,
  FOLD_JOB_NAME,
  type FoldOutcome,
  isVersionRefusal,
  isConnectionError,
  JOB_ATTEMPTS,
  type JobOutcome,
  type OutcomeOf,
  type RefitOutcome,
  JOB_QUEUE,
  packKey,
  queueConnection,
  RETRY_DELAY_MS,
  type RedisEndpoint,
  redisEndpoint,
  runKey,
  type ThreadSetup,
  type RedisWatch,
  WorkerEntrySchema,
  watchRedis,
  workerKeyPattern,
} from "@nightshift/worker";
import { Queue, QueueEvents } from "bullmq";
import { Redis } from "ioredis";
import { type JobRunner, JobsRefusedError } from "../job-runner.js";
import { uploadPack } from "./pack-upload.js";

export interface RedisRunnerOptions {
  /** Namespace of the queue and keys on this Redis (the workers must use the same); default `nightshift`. */
  readonly namespace?: string;
  /**
   * The run this runner serves, when known before its first job: a resume with nothing left to
   * run still drops the finished jobs its killed predecessor left in Redis.
   */
  readonly run?: string;
  /** How often jobs in flight, this run's keys and the live workers are checked; default 2 s. */
  readonly sweepSeconds?: number;
  /**
   * A finished job nobody collected (its coordinator died between committing the result and
   * removing the job, and the run was never resumed) is dropped after this long; so are this
   * run's pack and setup once the run stops renewing them. Default 7 days.
   */
  readonly keepSeconds?: number;
  /** Things the user should know: Redis unreachable (and since when) or back, Redis lost its data, no worker is listening, Redis refused a write. */
  readonly onNotice?: (message: string) => void;
  /** Since when Redis has been unreachable, or null once it answers again (for a status line; `onNotice` tells it too). */
  readonly onRedisState?: (unreachableSince: Date | null) => void;
}

interface Waiting {
  readonly job: Job;
  readonly resolve: (outcome: JobOutcome) => void;
  readonly reject: (error: Error) => void;
  /** When it was (last) queued. */
  queuedAt: number;
  /** Times it was queued again after Redis outages made BullMQ give up on it. */
  requeues: number;
  /** Being queued again: what Redis says of it meanwhile is about the old job. */
  requeueing: boolean;
}

/** Jobs kept queued ahead per worker thread, so a thread finds its next job waiting. */
const AHEAD = 2;
const MIN_IN_FLIGHT = 4;
/** The one early sweep runs this long after the first job is queued (the first round of jobs is queued by then). */
const EARLY_SWEEP_MS = 300;
/** Events are a fast path only (the sweep is the safety net): a short stream bounds memory, as results ride in it (100 results of 1 MB each is 100 MB of Redis). */
const EVENTS_KEPT = 100;
/** No worker entry for this long (Redis answering) before the workers are called gone: three heartbeats. */
const WORKERS_GONE_MS = 15_000;
/** BullMQ's reason for a job whose lock lapsed more often than the workers allow (`maxStalledCount`). */
const STALLED_TOO_OFTEN = /stalled more than allowable limit/;
/** A job BullMQ gave up on after Redis outages is queued again at most this often. */
const MAX_REQUEUES = 3;

/**
 * Fold jobs on Redis through BullMQ: any number of `nightshift worker` processes, on any
 * boxes, take them. The coordinator alone writes the run store; here it only queues jobs
 * and collects their results.
 *
 * - A job's id is run/trial/fold, so queueing it again is harmless: after a coordinator
 *   restart the scheduler asks for every job not in the store, and a job that finished in
 *   Redis meanwhile is collected, not redone; one that is missing is queued.
 * - The dataset pack goes up once, content-addressed by its sha256; the run's setup (pack,
 *   folds, metric) goes next to it. A sweep every few seconds notices a Redis that came
 *   back empty: it uploads both again and queues the jobs in flight again.
 * - A result is validated by the shared schema before it reaches the scheduler; its job is
 *   removed from Redis once the scheduler has committed it, so Redis holds only the jobs in
 *   flight, however long the night.
 * - Redis trouble never fails a job: commands wait for the connection to come back, and a
 *   refused write is retried with a notice.
 */
export function createRedisRunner(url: string | RedisEndpoint, setup: ThreadSetup, options: RedisRunnerOptions = {}): JobRunner {
  return new RedisRunner(typeof url === "string" ? redisEndpoint(url) : url, setup, options);
}

class RedisRunner implements JobRunner {
  private readonly namespace: string;
  private readonly keepMs: number;
  private readonly notice: (message: string) => void;
  private readonly redis: Redis;
  private readonly queue: Queue;
  private readonly events: QueueEvents;
  private readonly waiting = new Map<string, Waiting>();
  private readonly removals = new Set<Promise<void>>();
  private readonly sweeper: NodeJS.Timeout;
  private earlySweep: NodeJS.Timeout | undefined;
  private readonly watch: RedisWatch;
  private bound: { readonly run: string; readonly dataset: string } | undefined;
  private uploaded: Promise<void> | undefined;
  private slots = 0;
  private workersSeen: boolean | undefined;
  private workersGoneSince: number | undefined;
  private sweeping = false;
  private closed = false;
  private readonly runId: string | undefined;

  constructor(
    endpoint: RedisEndpoint,
    private readonly setup: ThreadSetup,
    options: RedisRunnerOptions,
  ) {
    this.namespace = checkNamespace(options.namespace ?? DEFAULT_NAMESPACE);
    this.keepMs = Math.round((options.keepSeconds ?? 7 * 24 * 3600) * 1000);
    this.runId = options.run;
    this.notice = options.onNotice ?? ((message) => console.error(`nightshift: ${message}`));
    const connection = queueConnection(endpoint);
    this.redis = new Redis(endpoint.options);
    this.queue = new Queue(JOB_QUEUE, { connection, prefix: this.namespace, streams: { events: { maxLen: EVENTS_KEPT } } });
    this.events = new QueueEvents(JOB_QUEUE, { connection, prefix: this.namespace });
    // An unreachable Redis is told by the watch, with since when and the next try; it is
    // not an error: every command waits for the connection to come back.
    this.watch = watchRedis(endpoint, this.notice, options.onRedisState);
    const reportError = once(this.notice);
    this.redis.on("error", reportError);
    this.queue.on("error", reportError);
    this.events.on("error", reportError);
    this.events.on("completed", ({ jobId, returnvalue }) => this.settle(jobId, { returnvalue }));
    this.events.on("failed", ({ jobId, failedReason }) => this.settle(jobId, { failedReason }));
    // Queued again while it already existed (a restart): it may have finished long ago.
    this.events.on("duplicated", ({ jobId }) => void this.collect([jobId]));
    this.sweeper = setInterval(() => void this.sweep(), Math.round((options.sweepSeconds ?? 2) * 1000));
    void this.countWorkers().catch(() => undefined);
  }

  get capacity(): number {
    return Math.max(MIN_IN_FLIGHT, AHEAD * this.slots);
  }

  run<J extends Job>(job: J): Promise<OutcomeOf<J>> {
    if (this.closed) return Promise.reject(new Error("the Redis runner is closed"));
    this.bind(job);
    const id = isRefitJob(job) ? refitJobId(job.run, job.trial) : foldJobId(job.run, job.trial, (job as FoldJob).fold);
    return new Promise((resolve, reject) => {
      this.waiting.set(id, { job, resolve: (outcome) => resolve(outcome as OutcomeOf<J>), reject, queuedAt: Date.now(), requeues: 0, requeueing: false });
      void this.enqueue(id, job);
    });
  }

  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    clearInterval(this.sweeper);
    clearTimeout(this.earlySweep);
    this.watch.stop();
    // Removals are queued one tick after their results were committed.
    await new Promise((r) => setImmediate(r));
    await Promise.all(this.removals);
    const run = this.bound?.run ?? this.runId;
    if (run !== undefined && this.waiting.size === 0) {
      // Nothing in flight: the run's setup is not needed until it runs again (it is uploaded then).
      await this.redis.del(runKey(this.namespace, run)).catch(() => undefined);
      await this.dropLeftovers(run).catch(() => undefined);
    }
    await this.events.close();
    await this.queue.close();
    this.redis.disconnect();
  }

  /**
   * Finished jobs of this run still in Redis once nothing is in flight. A coordinator killed
   * between committing a result and removing its job leaves one behind, and the next
   * coordinator never asks for it again (it is in the store). Rarely, a job of a killed
   * coordinator that this one stopped before asking for is among them: it is redone on resume.
   */
  private async dropLeftovers(run: string): Promise<void> {
    const page = 1000;
    const leftovers: string[] = [];
    for (let start = 0; ; start += page) {
      const jobs = await this.queue.getJobs(["completed", "failed"], start, start + page - 1);
      for (const job of jobs) if (job.id?.startsWith(`${run}.t`)) leftovers.push(job.id);
      if (jobs.length < page) break;
    }
    await Promise.all(leftovers.map((id) => this.queue.remove(id)));
  }

  /** Every job of a runner belongs to one run on one dataset. */
  private bind(job: Job): void {
    if (!this.bound) {
      const packed = unpackDataset(this.setup.pack).fingerprint;
      if (packed !== job.dataset) throw new Error(`job ${job.run}: its dataset ${job.dataset.slice(0, 12)} is not the uploaded pack ${packed.slice(0, 12)}`);
      this.bound = { run: job.run, dataset: job.dataset };
    } else if (this.bound.run !== job.run || this.bound.dataset !== job.dataset) throw new Error(`this runner serves run ${this.bound.run}, not ${job.run}`);
  }

  private ensureUploaded(): Promise<void> {
    this.uploaded ??= this.upload().catch((error: unknown) => {
      this.uploaded = undefined;
      throw error;
    });
    return this.uploaded;
  }

  /** The pack (once: content-addressed), then the run's setup, so a worker that sees the setup finds the pack. */
  private async upload(): Promise<void> {
    const bound = this.bound as { run: string; dataset: string };
    await uploadPack(this.redis, this.namespace, this.setup.pack, this.keepMs);
    const runAt = runKey(this.namespace, bound.run);
    const replies = await this.redis
      .multi()
      .del(runAt)
      .hset(runAt, encodeRunSetup({ dataset: bound.dataset, metric: this.setup.metric, node: NODE_MAJOR, foldTests: this.setup.foldTests }))
      .pexpire(runAt, this.keepMs)
      .exec();
    const refused = replies?.find(([error]) => error !== null)?.[0];
    if (refused) throw refused;
  }

  private async enqueue(id: string, job: Job, replace = false): Promise<void> {
    await this.patiently(`queueing job ${id}${replace ? " again" : ""}`, async () => {
      await this.ensureUploaded();
      if (replace) await this.queue.remove(id);
      await this.queue.add(FOLD_JOB_NAME, job, {
        jobId: id,
        attempts: JOB_ATTEMPTS,
        backoff: { type: "exponential", delay: RETRY_DELAY_MS },
        removeOnComplete: { age: Math.ceil(this.keepMs / 1000) },
        removeOnFail: { age: Math.ceil(this.keepMs / 1000) },
      });
      // The event stream is read only a while after this runner starts: the first jobs queued
      // again by a resumed run may have finished while no coordinator ran and say so
      // ("duplicated") before anyone listens. One early sweep collects them.
      this.earlySweep ??= setTimeout(() => void this.sweep(), EARLY_SWEEP_MS);
    });
  }

  /**
   * A job whose lock lapsed in Redis outages is handed back and counted as stalled, as if
   * its worker had died; after a few (`maxStalledCount`) BullMQ fails it. When Redis was
   * unreachable since the job was queued, those were outages, not crashes: the failed job
   * is replaced by a fresh one instead of becoming a failed fold. Out-of-memory kills with
   * no outage meanwhile still fail the job.
   */
  private lapsedInOutages(waiting: Waiting, failedReason: string): boolean {
    return STALLED_TOO_OFTEN.test(failedReason) && (this.watch.troubleAt ?? 0) >= waiting.queuedAt && waiting.requeues < MAX_REQUEUES;
  }

  private requeue(id: string, waiting: Waiting): void {
    waiting.requeueing = true;
    waiting.requeues++;
    this.notice(`job ${id}: its locks lapsed while Redis was unreachable (BullMQ counts that as a dying worker and gave up on it); queued again`);
    void this.enqueue(id, waiting.job, true).finally(() => {
      waiting.queuedAt = Date.now();
      waiting.requeueing = false;
    });
  }

  /** Retries what Redis refused (out of memory, read-only replica ...) until it goes through or the runner closes. */
  private async patiently(what: string, action: () => Promise<void>): Promise<void> {
    for (let attempt = 0; !this.closed; attempt++) {
      try {
        await action();
        return;
      } catch (error) {
        const wait = Math.min(30, 2 ** attempt);
        this.notice(`Redis refused ${what} (${error instanceof Error ? error.message : String(error)}); trying again in ${wait} s`);
        await new Promise((r) => setTimeout(r, wait * 1000));
      }
    }
  }

  private settle(id: string, result: { returnvalue: unknown } | { failedReason: string }): void {
    const waiting = this.waiting.get(id);
    if (!waiting || waiting.requeueing) return;
    if ("failedReason" in result && this.lapsedInOutages(waiting, result.failedReason)) return this.requeue(id, waiting);
    this.waiting.delete(id);
    // Removed below like any settled job, so the resume that follows queues it again.
    if ("failedReason" in result && isVersionRefusal(result.failedReason)) waiting.reject(new JobsRefusedError(result.failedReason));
    else waiting.resolve("returnvalue" in result ? this.decode(waiting.job, result.returnvalue) : this.failed(waiting.job, result.failedReason));
    // The scheduler commits an outcome in the promise reactions that run before any
    // timer callback, so by then the result is in the run store and the job can go.
    setImmediate(() => {
      const removal = this.queue
        .remove(id)
        .then(() => undefined)
        .catch(() => undefined)
        .finally(() => this.removals.delete(removal));
      this.removals.add(removal);
    });
  }

  private decode(job: Job, returnvalue: unknown): JobOutcome {
    if (isRefitJob(job)) return this.decodeRefit(job, returnvalue);
    const parsed = FoldResultSchema.safeParse(returnvalue);
    if (!parsed.success) return this.failed(job, `a worker sent a result that does not match the result schema: ${parsed.error.issues.map((i) => `${i.path.join(".") || "(result)"}: ${i.message}`).join("; ")}`);
    const result = parsed.data;
    if (result.trial !== job.trial || result.fold !== job.fold) return this.failed(job, `a worker sent the result of trial ${result.trial} fold ${result.fold} for this job`);
    let outOfFold: Float32Array | null = null;
    if (result.outOfFold !== null) {
      const rows = this.setup.foldTests[job.fold]?.length ?? 0;
      outOfFold = float32FromBase64(result.outOfFold);
      if (rows === 0 || outOfFold.length === 0 || outOfFold.length % rows !== 0) return this.failed(job, `a worker sent ${outOfFold.length} predictions for the fold's ${rows} rows`);
    }
    return { trial: job.trial, fold: job.fold, score: result.score, outOfFold, fitSeconds: result.fitSeconds, predictSeconds: result.predictSeconds, error: result.error };
  }

  private decodeRefit(job: RefitJob, returnvalue: unknown): RefitOutcome {
    const parsed = RefitResultSchema.safeParse(returnvalue);
    if (!parsed.success) return this.failed(job, `a worker sent a result that does not match the refit result schema: ${parsed.error.issues.map((i) => `${i.path.join(".") || "(result)"}: ${i.message}`).join("; ")}`) as RefitOutcome;
    const result = parsed.data;
    if (result.trial !== job.trial) return this.failed(job, `a worker sent the refit of trial ${result.trial} for this job`) as RefitOutcome;
    return { kind: "refit", trial: job.trial, model: result.model as ModelJson | null, fitSeconds: result.fitSeconds, error: result.error };
  }

  private failed(job: Job, reason: string): JobOutcome {
    const error = STALLED_TOO_OFTEN.test(reason) ? "the workers running this job died each time it ran (out of memory?); it was not tried again" : reason;
    if (isRefitJob(job)) return { kind: "refit", trial: job.trial, model: null, fitSeconds: 0, error };
    return { trial: job.trial, fold: (job as FoldJob).fold, score: null, outOfFold: null, fitSeconds: 0, predictSeconds: 0, error };
  }

  /** Looks up jobs whose end the event stream may not have told (missed, trimmed, or before a restart). */
  private async collect(ids: readonly string[]): Promise<void> {
    const states = await Promise.all(ids.map((id) => this.queue.getJobState(id)));
    await Promise.all(
      ids.map(async (id, i) => {
        const waiting = this.waiting.get(id);
        if (!waiting || waiting.requeueing) return;
        if (states[i] === "completed" || states[i] === "failed") {
          const job = await this.queue.getJob(id);
          // Gone, or queued again since its state was read.
          if (!job || job.finishedOn === undefined) return;
          this.settle(id, states[i] === "completed" ? { returnvalue: job.returnvalue } : { failedReason: job.failedReason });
        } else if (states[i] === "unknown") {
          // Gone from Redis before it was collected (a Redis restart lost it): queue it again.
          await this.enqueue(id, waiting.job);
        }
      }),
    );
  }

  private async sweep(): Promise<void> {
    if (this.sweeping || this.closed) return;
    this.sweeping = true;
    try {
      await this.countWorkers();
      if (this.bound && this.uploaded) {
        const keys = [runKey(this.namespace, this.bound.run), packKey(this.namespace, this.bound.dataset)];
        // Renewing the expiry answers whether the keys are there: a run may outlast keepSeconds.
        const renewed = await Promise.all(keys.map((key) => this.redis.pexpire(key, this.keepMs)));
        if (renewed.some((found) => found === 0)) {
          this.notice(`Redis lost this run's data (restarted empty?); uploading the dataset again and queueing the ${this.waiting.size} jobs in flight again`);
          this.uploaded = undefined;
          await this.ensureUploaded();
          // The queue's own settings went with the data; the event stream is kept short again.
          await this.redis.hset(this.queue.keys.meta, "opts.maxLenEvents", EVENTS_KEPT);
        }
      }
      await this.collect([...this.waiting.keys()]);
    } catch (error) {
      this.notice(`checking the jobs in flight failed (${error instanceof Error ? error.message : String(error)}); checking again shortly`);
    } finally {
      this.sweeping = false;
    }
  }

  /** Worker threads listening on this namespace, from the entries live workers keep renewing. */
  private async countWorkers(): Promise<void> {
    const keys: string[] = [];
    let cursor = "0";
    do {
      const [next, found] = await this.redis.scan(cursor, "MATCH", workerKeyPattern(this.namespace), "COUNT", 500);
      cursor = next;
      keys.push(...found);
    } while (cursor !== "0");
    let slots = 0;
    if (keys.length > 0) {
      for (const raw of await this.redis.mget(keys)) {
        if (raw === null) continue;
        try {
          const entry = WorkerEntrySchema.safeParse(JSON.parse(raw));
          if (entry.success) slots += entry.data.concurrency;
        } catch {
          // An unreadable entry is no worker.
        }
      }
    }
    this.slots = slots;
    const seen = slots > 0;
    if (!seen && this.workersSeen) {
      // Workers' entries lapse while Redis is unreachable, and come back within one
      // heartbeat once it answers: only a longer silence means the workers are gone.
      if (!this.watch.reachable) this.workersGoneSince = undefined;
      else this.workersGoneSince ??= Date.now();
      if (this.workersGoneSince === undefined || Date.now() - this.workersGoneSince < WORKERS_GONE_MS) return;
    }
    this.workersGoneSince = undefined;
    if (seen !== this.workersSeen && (this.workersSeen !== undefined || !seen)) {
      this.notice(seen ? `${keys.length} worker process(es) with ${slots} threads are serving namespace '${this.namespace}'` : `no worker is serving namespace '${this.namespace}' on this Redis; jobs wait until one starts (nightshift worker --redis URL)`);
    }
    this.workersSeen = seen;
  }
}

/** Reports each distinct error once a minute, not at every reconnection attempt; a lost connection is the watch's to tell. */
function once(notice: (message: string) => void): (error: Error) => void {
  const last = new Map<string, number>();
  return (error) => {
    if (isConnectionError(error)) return;
    const now = Date.now();
    if ((last.get(error.message) ?? 0) > now - 60_000) return;
    last.set(error.message, now);
    notice(`Redis: ${error.message}`);
  };
}
