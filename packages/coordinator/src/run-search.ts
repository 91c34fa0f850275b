import { writeFileSync, existsSync, readFileSync } from "node:fs";
import { dirname, join, resolve } from "node:path";
import {
  type Dataset,
  defaultMetricFor,
  extremes,
  type FamilyName,
  holdoutSplit,
  InputError,
  metricByName,
  type Metric,
  packDataset,
  type Plan,
  planFolds,
  readCsvDataset,
  readPlan,
  subsetDataset,
  allRows,
} from "@nightshift/core";
import { learnerFor } from "@nightshift/learners";
import { RunStore } from "@nightshift/store";
import { defaultBatchSize } from "./halving.js";
import type { JobRunner } from "./job-runner.js";
import { createLocalPool } from "./local-pool.js";
import { canonicalJson, defaultRunFolder, runIdOf } from "./run-folder.js";
import { type Progress, runSchedule, type ScheduleSummary } from "./scheduler.js";
import { deriveTrial } from "./trials.js";
import { type FinalStepResult, HOLDOUT_PACK_FILE, runFinalStep, TRAINING_PACK_FILE } from "./final-step.js";

export const NIGHTSHIFT_VERSION = "0.1.0";
export const DATASET_PACK_FILE = TRAINING_PACK_FILE;

export interface RunOptions {
  readonly planPath: string;
  /** Folder of this run; default `<runsDir>/<run id>`. */
  readonly runDir?: string;
  readonly runsDir?: string;
  readonly workers?: number;
  /** Overrides the plan's trial budget (a shortened demo). */
  readonly trials?: number;
  readonly onProgress?: (progress: Progress) => void;
  readonly onStart?: (info: { runId: string; runDir: string; resumed: boolean; trials: number; folds: number; rows: number; metric: string }) => void;
  readonly shouldStop?: () => boolean;
  /** Run the final step (ensembles, refits, hold-out, ensemble.json) when the search completes; default true. */
  readonly finalStep?: boolean;
  /** Runs fold jobs somewhere else than on local threads (distributed mode). */
  /** Makes the job runner for this run (`run` is its id); default: local worker threads. */
  readonly runner?: (setup: { pack: Uint8Array; foldTests: Uint32Array[]; metric: string; run: string }) => JobRunner;
}

export interface RunResult extends ScheduleSummary {
  readonly runId: string;
  readonly runDir: string;
  /** The final step's outcome; null when the search did not complete (it runs on the resume that completes it). */
  readonly finalStep: FinalStepResult | null;
}

/** Everything fixed before the first fold job: plan, data, folds, trials. */
export interface PreparedRun {
  readonly plan: Plan;
  readonly dataset: Dataset;
  readonly trainRows: Uint32Array;
  readonly holdoutRows: Uint32Array;
  readonly training: Dataset;
  readonly foldTests: Uint32Array[];
  readonly metric: Metric;
  readonly runId: string;
  readonly frozenPlan: string;
}

/** Validates every searched value of every family against the family's parameter schema. */
function checkFamilies(plan: Plan): void {
  for (const [family, space] of Object.entries(plan.families) as Array<[FamilyName, NonNullable<Plan["families"][FamilyName]>]>) {
    const learner = learnerFor(family);
    for (const [name, distribution] of Object.entries(space.params)) {
      for (const value of extremes(distribution)) {
        try {
          learner.parseParams({ [name]: value });
        } catch (error) {
          throw new InputError(`plan families.${family}.${name}`, (error as Error).message);
        }
      }
    }
  }
}

export async function prepareRun(planPath: string, overrides: { trials?: number } = {}): Promise<PreparedRun> {
  const read = readPlan(planPath);
  const plan: Plan = overrides.trials === undefined ? read : { ...read, budget: { ...read.budget, trials: overrides.trials } };
  checkFamilies(plan);
  const dataPath = resolve(dirname(planPath), plan.data.train);
  const dataset = await readCsvDataset(dataPath, {
    target: plan.data.target,
    ignore: plan.data.ignore,
    categorical: plan.data.categorical,
    task: plan.task,
    group: plan.folds.group,
  });
  const metricName = plan.metric ?? defaultMetricFor(dataset.task, dataset.target).name;
  let metric: Metric;
  try {
    metric = metricByName(metricName);
  } catch (error) {
    throw new InputError(`${planPath} metric`, (error as Error).message);
  }
  if (!metric.tasks.includes(dataset.task)) throw new InputError(`${planPath} metric`, `${metric.name} does not apply to a ${dataset.task} task; use one of its metrics`);
  const { train, holdout } = holdoutSplit(dataset, plan.data.holdout, plan.seed);
  const training = subsetDataset(dataset, train);
  const folds = planFolds(training, allRows(training.rowCount), plan.folds, plan.seed);
  const frozenPlan = canonicalJson({ ...plan, metric: metric.name, task: dataset.task });
  const runId = runIdOf(plan.name, frozenPlan, dataset.fingerprint);
  return { plan, dataset, trainRows: train, holdoutRows: holdout, training, foldTests: folds.map((f) => f.test), metric, runId, frozenPlan };
}

/**
 * A run folder is resumed only with the plan and data it was started with; anything else
 * is refused before the store is opened for writing, so nothing stored changes.
 */
function refuseChangedRun(runDir: string, prepared: PreparedRun): void {
  const store = RunStore.open(runDir, { readonly: true });
  let plan: string | undefined;
  let fingerprint: string | undefined;
  try {
    plan = store.getMeta("plan");
    fingerprint = store.getMeta("dataset_fingerprint");
  } finally {
    store.close();
  }
  if (plan !== undefined && plan !== prepared.frozenPlan)
    throw new InputError(runDir, "this run folder holds a run of a different plan; resume it with the plan it was started with, or start a new run folder for the changed plan");
  if (fingerprint !== undefined && fingerprint !== prepared.dataset.fingerprint)
    throw new InputError(runDir, `the data file changed since this run started (fingerprint ${fingerprint.slice(0, 12)}, now ${prepared.dataset.fingerprint.slice(0, 12)}); restore it or start a new run folder`);
}

/** Runs (or resumes) a plan's search to its end, its budget, or a stop request. */
export async function runSearch(options: RunOptions): Promise<RunResult> {
  const prepared = await prepareRun(options.planPath, { trials: options.trials });
  const { plan, runId, metric, training, foldTests } = prepared;
  const runDir = resolve(options.runDir ?? defaultRunFolder(options.runsDir ?? "runs", runId));
  const resumed = RunStore.exists(runDir);
  if (resumed) refuseChangedRun(runDir, prepared);
  const store = RunStore.open(runDir, { create: true });
  try {
    const stored = store.initMeta({
      run_id: runId,
      plan: prepared.frozenPlan,
      dataset_fingerprint: prepared.dataset.fingerprint,
      training_fingerprint: training.fingerprint,
      metric: metric.name,
      direction: metric.direction,
      task: prepared.dataset.task,
      fold_count: String(foldTests.length),
      // n_test / n_train of one k-fold split, for the corrected resampled t-test.
      test_fraction: String(1 / (plan.folds.k - 1)),
      created_at: new Date().toISOString(),
      node_major: process.versions.node.split(".")[0],
      nightshift_version: NIGHTSHIFT_VERSION,
    });
    if (stored.plan !== prepared.frozenPlan || stored.dataset_fingerprint !== prepared.dataset.fingerprint) refuseChangedRun(runDir, prepared);
    const pack = packDataset(training, { shared: true });
    const packFile = join(runDir, DATASET_PACK_FILE);
    if (!existsSync(packFile) || readFileSync(packFile).length !== pack.byteLength) writeFileSync(packFile, pack);
    // The sealed rows stay in the run folder for the final step; no worker is ever given this file.
    if (prepared.holdoutRows.length > 0) {
      const holdoutPack = packDataset(subsetDataset(prepared.dataset, prepared.holdoutRows));
      const holdoutFile = join(runDir, HOLDOUT_PACK_FILE);
      if (!existsSync(holdoutFile) || readFileSync(holdoutFile).length !== holdoutPack.byteLength) writeFileSync(holdoutFile, holdoutPack);
    }
    store.saveFolds(foldTests.map((test, i) => ({ repeat: Math.floor(i / plan.folds.k), index: i % plan.folds.k, test })));
    if (!store.getMeta("holdout_rows")) store.setMeta("holdout_rows", JSON.stringify(Array.from(prepared.holdoutRows)));
    const trials = Array.from({ length: plan.budget.trials }, (_, i) => deriveTrial(plan, i));
    store.addTrials(trials.map((t) => ({ trial: t.trial, family: t.family, params: { ...t.params } })));
    store.addEvent(resumed ? "run_resumed" : "run_started", { run: runId, trials: trials.length, folds: foldTests.length });
    store.setMeta("state", "running");
    options.onStart?.({ runId, runDir, resumed, trials: trials.length, folds: foldTests.length, rows: training.rowCount, metric: metric.name });

    const setup = { pack, foldTests, metric: metric.name };
    const runner = options.runner ? options.runner({ ...setup, run: runId }) : createLocalPool(setup, options.workers);
    let summary: ScheduleSummary;
    let finalStep: FinalStepResult | null = null;
    try {
      summary = await runSchedule(
        store,
        runner,
        {
          runId,
          seed: plan.seed,
          datasetFingerprint: training.fingerprint,
          trials,
          foldCount: foldTests.length,
          direction: metric.direction,
          halving: plan.halving ? { eta: plan.halving.eta, batch: plan.halving.batch ?? defaultBatchSize(foldTests.length, plan.halving.eta) } : null,
          timeoutSeconds: plan.budget.trial_minutes ? (plan.budget.trial_minutes * 60) / foldTests.length : null,
          // The hours budget counts from this start: a resumed run gets the budget again.
          deadline: plan.budget.hours ? Date.now() + plan.budget.hours * 3600_000 : null,
        },
        { onProgress: options.onProgress, shouldStop: options.shouldStop },
      );
      store.setMeta("state", summary.completed ? "finished" : summary.stoppedBy);
      store.addEvent(summary.completed ? "run_finished" : "run_stopped", { run: runId, stoppedBy: summary.stoppedBy, foldsRun: summary.foldsRun });
      // A completed search goes on to its final step on the same runner; a finished run resumed finds it done.
      if (summary.completed && options.finalStep !== false) finalStep = await runFinalStep({ runDir, store, runner, version: NIGHTSHIFT_VERSION });
    } finally {
      await runner.close();
    }
    return { ...summary, runId, runDir, finalStep };
  } finally {
    store.close();
  }
}
