import { availableParallelism } from "node:os";
import type { Job } from "@nightshift/core";
import { type OutcomeOf, THREAD_ENTRY, type ThreadSetup } from "@nightshift/worker";
import { Piscina } from "piscina";
import { type JobRunner, JobTimeoutError } from "./job-runner.js";

/**
 * The embedded default: jobs (fold and refit) on local worker threads (piscina). The dataset pack
 * lives in a SharedArrayBuffer, so threads read it without a copy. A job over its time
 * limit is aborted, which terminates its thread; piscina starts a fresh one.
 */
export function createLocalPool(setup: ThreadSetup, workers: number = availableParallelism()): JobRunner {
  const threads = Math.max(1, Math.floor(workers));
  const pool = new Piscina({
    filename: THREAD_ENTRY.href,
    minThreads: threads,
    maxThreads: threads,
    idleTimeout: 60_000,
    workerData: setup,
    // Each thread gets one job at a time: fits are long and CPU-bound.
    concurrentTasksPerWorker: 1,
  });
  return {
    capacity: threads,
    async run<J extends Job>(job: J): Promise<OutcomeOf<J>> {
      if (job.timeoutSeconds === null) return (await pool.run(job)) as OutcomeOf<J>;
      const controller = new AbortController();
      const timer = setTimeout(() => controller.abort(new JobTimeoutError(job.timeoutSeconds ?? 0)), job.timeoutSeconds * 1000);
      try {
        return (await pool.run(job, { signal: controller.signal })) as OutcomeOf<J>;
      } catch (error) {
        if (controller.signal.aborted) throw new JobTimeoutError(job.timeoutSeconds);
        throw error;
      } finally {
        clearTimeout(timer);
      }
    },
    async close() {
      await pool.destroy();
    },
  };
}
