import { mkdtempSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import type { FoldJob, Job } from "@nightshift/core";
import { RunStore } from "@nightshift/store";
import type { OutcomeOf } from "@nightshift/worker";
import { describe, expect, it } from "vitest";
import { type JobRunner, JobsRefusedError } from "../src/job-runner.js";
import { runSchedule, type ScheduleSpec } from "../src/scheduler.js";
import type { Trial } from "../src/trials.js";

const TRIALS: Trial[] = Array.from({ length: 4 }, (_, trial) => ({ trial, family: "tree", params: { depth: 2 } }));
const SPEC: ScheduleSpec = {
  runId: "failures",
  seed: 1,
  datasetFingerprint: "0".repeat(64),
  trials: TRIALS,
  foldCount: 3,
  direction: "max",
  halving: null,
  timeoutSeconds: null,
  deadline: null,
};

/** Trial 1 fails on folds 1 and 2 (fold 0 succeeds); trial 2's fold 0 is refused when `refuse` is set. */
function outcome(job: FoldJob, refuse: boolean): OutcomeOf<FoldJob> | Error {
  if (refuse && job.trial === 2 && job.fold === 0) return new JobsRefusedError("refused: versions differ: job schema 1 is older than this worker's 2");
  const error = job.trial === 1 && job.fold > 0 ? `boom on fold ${job.fold}` : null;
  return { trial: job.trial, fold: job.fold, score: error === null ? job.trial + job.fold / 10 : null, outOfFold: null, fitSeconds: 0, predictSeconds: 0, error };
}

/** Holds every job until `capacity` are in flight (or none is left), then ends them last-queued first. */
function reversingRunner(capacity: number, refuse = false): JobRunner {
  let held: Array<() => void> = [];
  const release = (): void => {
    const batch = held.reverse();
    held = [];
    for (const end of batch) end();
  };
  return {
    capacity,
    run<J extends Job>(job: J): Promise<OutcomeOf<J>> {
      return new Promise((resolve, reject) => {
        const result = outcome(job as FoldJob, refuse);
        held.push(() => (result instanceof Error ? reject(result) : resolve(result as OutcomeOf<J>)));
        if (held.length >= capacity) release();
        else setTimeout(release, 5);
      });
    },
    close: async () => undefined,
  };
}

function freshStore(): RunStore {
  const store = RunStore.open(mkdtempSync(join(tmpdir(), "nightshift-scheduler-")), { create: true });
  store.addTrials(TRIALS.map((t) => ({ ...t, params: { ...t.params } })));
  return store;
}

describe("a failed trial in the scheduler", () => {
  it("runs all its folds and keeps its lowest failed fold's message, whatever the jobs in flight and their order", async () => {
    const rows = async (capacity: number) => {
      const store = freshStore();
      try {
        const summary = await runSchedule(store, reversingRunner(capacity), SPEC);
        expect(summary).toMatchObject({ completed: true, stoppedBy: "finished" });
        return { trials: store.trials().map(({ trial, status, message }) => ({ trial, status, message })), folds: store.foldScores().map((r) => `${r.trial}/${r.fold}/${r.error ?? r.score}`).sort() };
      } finally {
        store.close();
      }
    };
    const oneAtATime = await rows(1);
    expect(oneAtATime.trials[1]).toEqual({ trial: 1, status: "failed", message: "fold 1: boom on fold 1" });
    expect(oneAtATime.folds).toHaveLength(12);
    // Twelve in flight, ended in reverse: fold 2's failure is committed before fold 1's.
    expect(await rows(12)).toEqual(oneAtATime);
  });

  it("stops on a job refused for its version: nothing stored for it, the jobs in flight committed, the refusal thrown", async () => {
    const store = freshStore();
    try {
      await expect(runSchedule(store, reversingRunner(12, true), SPEC)).rejects.toThrow(/a worker refused this run's jobs: versions differ: job schema 1 is older than this worker's 2\. Nothing was stored/);
      const keys = store.foldScores().map((r) => `${r.trial}/${r.fold}`);
      expect(keys).toHaveLength(11);
      expect(keys).not.toContain("2/0");
      expect(store.trials().find((t) => t.trial === 2)?.status).not.toBe("failed");
    } finally {
      store.close();
    }
  });
});
