import { existsSync, readFileSync, renameSync, rmSync, writeFileSync } from "node:fs";
import { join, resolve } from "node:path";
import {
  buildEnsembles,
  bestF1Threshold,
  EXPORT_FORMAT,
  EXPORT_VERSION,
  type BuiltEnsemble,
  type EnsembleBuild,
  EnsembleSummarySchema,
  type ExportedEnsemble,
  ExportedEnsembleSchema,
  type Holdout,
  HoldoutSchema,
  type Importance,
  ImportanceSchema,
  loadEnsemble,
  permutationImportance,
  readOutOfFold,
  runFacts,
} from "@nightshift/aggregator";
import {
  allRows,
  createRng,
  type Dataset,
  datasetSchema,
  InputError,
  JOB_SCHEMA_VERSION,
  metricByName,
  NODE_MAJOR,
  type Plan,
  PlanSchema,
  predictionWidth,
  type RefitJob,
  unpackDataset,
} from "@nightshift/core";
import type { ModelJson } from "@nightshift/learners";
import { RunStore } from "@nightshift/store";
import { type RefitOutcome, targetOf, type ThreadSetup } from "@nightshift/worker";
import { type JobRunner, JobsRefusedError } from "./job-runner.js";
import { createLocalPool } from "./local-pool.js";

export const ENSEMBLE_FILE = "ensemble.json";
export const HOLDOUT_PACK_FILE = "holdout.pack";
export const TRAINING_PACK_FILE = "dataset.pack";
/**
 * Artifact holding the exported predictor between the hold-out's opening and the writing of
 * ensemble.json: recorded in the opening's transaction, removed when the step is marked done.
 */
const PENDING_EXPORT = "export.pending";
/** Repeats of each feature's shuffle for permutation importance (scikit-learn's default). */
export const IMPORTANCE_REPEATS = 5;

export interface FinalStepOptions {
  readonly runDir: string;
  /** The run's store, when the caller has it open. */
  readonly store?: RunStore;
  /** A runner serving this run's training pack (the search's own); else one is made and closed here. */
  readonly runner?: JobRunner;
  /** Makes a runner for the run's training pack (distributed mode); default local threads. */
  readonly makeRunner?: (setup: ThreadSetup) => JobRunner;
  readonly workers?: number;
  readonly version?: string;
}

export interface FinalStepResult {
  readonly status: "done" | "already_done" | "no_ensemble";
  readonly message: string | null;
  /** Name of the exported predictor. */
  readonly final: string | null;
  /** Path of ensemble.json, when written. */
  readonly exported: string | null;
  readonly notes: readonly string[];
}

/** The parts of the frozen plan the final step reads (the whole plan was validated when the run started). */
function frozenPlan(text: string | undefined): { seed: number; ensemble: Plan["ensemble"]; trialMinutes: number | null } {
  const plan = JSON.parse(text ?? "{}") as { seed?: unknown; ensemble?: unknown; budget?: { trial_minutes?: unknown } };
  return {
    seed: typeof plan.seed === "number" ? plan.seed : 0,
    ensemble: PlanSchema.shape.ensemble.parse(plan.ensemble),
    trialMinutes: typeof plan.budget?.trial_minutes === "number" ? plan.budget.trial_minutes : null,
  };
}

/** A predictor the final step can export or score on the hold-out. */
interface Candidate {
  readonly name: string;
  readonly built: BuiltEnsemble;
}

/**
 * The run's final step, run once after the search completed (and again by a resume, which
 * finds it done and changes nothing):
 *
 * 1. Ensembles from the stored out-of-fold predictions (greedy selection, stacking, soft
 *    voting), each with its nested estimate; recorded as artifacts of kind "ensemble".
 * 2. The predictor to export is chosen by the nested estimates alone (the best single trial
 *    unless an ensemble's honest estimate beats it).
 * 3. Refits: every member of every ensemble and the best single trial is fitted once more on
 *    all training rows, as refit jobs on the job runner like any fold job. Refitting (rather
 *    than averaging each member's k fold models) gives each member the same data the final
 *    predictor will be judged on and one model instead of k in the exported file; the fold
 *    models are never kept (a run has k models per trial, most of them never used). The
 *    weights and the stacker stay those fitted on out-of-fold predictions, as in stacking's
 *    usual practice (Wolpert 1992; Breiman 1996).
 * 4. The hold-out is opened once: every ensemble and the best single trial are scored on the
 *    sealed rows (kept in the run folder, never sent to a worker), permutation importance of
 *    the exported predictor is measured there, and the opening time is recorded. Nothing is
 *    chosen after this point, so the hold-out scores cannot change the choice.
 * 5. `ensemble.json` is written; the step is marked done.
 *
 * The opening's results (scores, importance, the exported predictor with its hold-out score) are
 * recorded in one transaction before `ensemble.json` is written. A step that fails after that
 * (a full or read-only disk refusing the file, a killed process) is resumed from the record: the
 * file is written from it and the hold-out is not opened a second time.
 */
export async function runFinalStep(options: FinalStepOptions): Promise<FinalStepResult> {
  const runDir = resolve(options.runDir);
  const store = options.store ?? RunStore.open(runDir);
  let ownRunner: JobRunner | undefined;
  try {
    if (store.getMeta("final_step") === "done") return { status: "already_done", message: null, final: store.getMeta("final_predictor") ?? null, exported: existsSync(join(runDir, ENSEMBLE_FILE)) ? join(runDir, ENSEMBLE_FILE) : null, notes: [] };
    if (store.getMeta("state") !== "finished") throw new InputError(runDir, "the search of this run has not finished; resume it with nightshift run first");
    const pending = store.artifact(PENDING_EXPORT);
    if (pending) {
      const { final, notes, ensemble } = pending.data as { final: string; notes: string[]; ensemble: unknown };
      return finish(store, runDir, ExportedEnsembleSchema.parse(ensemble), final, notes);
    }
    const facts = runFacts(store);
    const metric = metricByName(facts.metric);
    const plan = frozenPlan(store.getMeta("plan"));
    const packBytes = readFileSync(join(runDir, TRAINING_PACK_FILE));
    const pack = new Uint8Array(new SharedArrayBuffer(packBytes.byteLength));
    pack.set(packBytes);
    const training = unpackDataset(pack);
    if (training.fingerprint !== store.getMeta("training_fingerprint")) throw new InputError(join(runDir, TRAINING_PACK_FILE), "this dataset pack is not the one the run was searched on");

    const top = Math.max(plan.ensemble.selection.candidates, plan.ensemble.stacking.top, plan.ensemble.voting.top);
    const set = readOutOfFold(store, training, facts.direction, top);
    if (set.trials.length === 0) {
      const message = "no trial finished with out-of-fold predictions on every fold: no ensemble, no exported predictor, the hold-out stays sealed";
      store.addEvent("final_step", { status: "no_ensemble", message });
      store.setMeta("final_step", "done");
      return { status: "no_ensemble", message, final: null, exported: null, notes: [] };
    }
    const build = buildEnsembles(set, metric, plan.ensemble, facts.testFraction);
    for (const e of build.ensembles) store.putArtifact(`ensemble.${e.spec.kind}`, "ensemble", EnsembleSummarySchema.parse(e.summary));
    store.addEvent("ensembles_built", {
      final: build.final,
      notes: build.notes,
      single: { trial: build.single.spec.members[0].trial, mean: build.single.summary.mean, nested: build.single.summary.nested.mean },
      ensembles: build.ensembles.map((e) => ({ kind: e.spec.kind, mean: e.summary.mean, nested: e.summary.nested.mean })),
    });

    const trials = new Map(store.trials().map((t) => [t.trial, t]));
    const needed = [...new Set([...build.single.spec.members, ...build.ensembles.flatMap((e) => e.spec.members)].map((m) => m.trial))].sort((a, b) => a - b);
    const runner = options.runner ?? (ownRunner = (options.makeRunner ?? ((setup) => createLocalPool(setup, options.workers)))({ pack, foldTests: store.folds().map((f) => f.test), metric: metric.name }));
    const refits = await refitAll(runner, needed.map((trial): RefitJob => {
      const record = trials.get(trial);
      if (!record) throw new Error(`trial ${trial} is not in the run store`);
      return {
        schema: JOB_SCHEMA_VERSION,
        kind: "refit",
        node: NODE_MAJOR,
        run: facts.runId,
        dataset: training.fingerprint,
        seed: plan.seed,
        trial,
        family: record.family as RefitJob["family"],
        params: record.params as RefitJob["params"],
        timeoutSeconds: plan.trialMinutes ? plan.trialMinutes * 60 : null,
      };
    }));
    const notes = [...build.notes];
    for (const [trial, outcome] of refits) if (outcome.error !== null) notes.push(`trial ${trial}: refit on all training rows failed (${outcome.error}); predictors that need it are not exported`);

    const candidates: Candidate[] = [{ name: `best single trial ${build.single.spec.members[0].trial}`, built: build.single }, ...build.ensembles.map((e) => ({ name: e.spec.kind, built: e }))];
    const exportable = (c: Candidate): boolean => c.built.spec.members.every((m) => refits.get(m.trial)?.model);
    const chosen = chooseExported(candidates, build, exportable);
    if (chosen === undefined) {
      const message = "no predictor could be refitted on all training rows: nothing exported, the hold-out stays sealed";
      store.addEvent("final_step", { status: "no_ensemble", message, notes });
      store.setMeta("final_step", "done");
      return { status: "no_ensemble", message, final: null, exported: null, notes };
    }
    const version = options.version ?? store.getMeta("nightshift_version") ?? "0";
    const exports = new Map<Candidate, ExportedEnsemble>();
    const exportOf = (c: Candidate): ExportedEnsemble => {
      let exported = exports.get(c);
      if (!exported) {
        const threshold = training.task === "binary" ? bestF1Threshold(positiveRows(set.target), c.built.outOfFold) : undefined;
        exported = exportedEnsemble({ candidate: c, training, runId: facts.runId, metric: metric.name, version, refits, trials, threshold });
        exports.set(c, exported);
      }
      return exported;
    };

    const holdoutFile = join(runDir, HOLDOUT_PACK_FILE);
    let holdoutScore: number | null = null;
    if (existsSync(holdoutFile)) {
      const holdout = unpackDataset(readFileSync(holdoutFile));
      const target = targetOf(holdout, allRows(holdout.rowCount));
      const classCount = holdout.target.kind === "classes" ? holdout.target.labels.length : 1;
      const width = predictionWidth(holdout.task, classCount);
      // The one opening: every predictor scored, the exported one explained, the time recorded.
      const openedAt = new Date().toISOString();
      const loaded = new Map(candidates.filter(exportable).map((c) => [c, loadEnsemble(exportOf(c))]));
      const scores = candidates.map((c) => {
        const predictor = loaded.get(c);
        if (!predictor) return { name: c.name, score: null };
        const score = metric.score(target, predictor.predict(holdout.features), width);
        return { name: c.name, score: Number.isFinite(score) ? score : null };
      });
      holdoutScore = scores[candidates.indexOf(chosen)].score;
      const final = loaded.get(chosen) as ReturnType<typeof loadEnsemble>;
      const importance = permutationImportance({
        columns: holdout.features,
        target,
        metric,
        width,
        predict: (columns) => final.predict(columns),
        repeats: IMPORTANCE_REPEATS,
        rng: createRng(plan.seed, "importance"),
      });
      const importanceArtifact: Importance = {
        predictor: chosen.name,
        metric: metric.name,
        repeats: IMPORTANCE_REPEATS,
        rows: holdout.rowCount,
        baseline: finiteOrNull(importance.baseline),
        features: importance.features.map((f) => ({ name: f.name, mean: finiteOrNull(f.mean), std: finiteOrNull(f.std) })).sort((a, b) => (b.mean ?? -Infinity) - (a.mean ?? -Infinity)),
      };
      const holdoutArtifact: Holdout = { opened_at: openedAt, scores, rows: holdout.rowCount, final: chosen.name };
      const exported = withHoldout(exportOf(chosen), holdoutScore);
      // The opening is recorded whole or not at all, with the predictor it scored.
      store.atomically(() => {
        store.putArtifact("importance", "importance", ImportanceSchema.parse(importanceArtifact));
        store.putArtifact("holdout", "holdout", HoldoutSchema.parse(holdoutArtifact));
        store.addEvent("holdout_opened", { opened_at: openedAt, rows: holdout.rowCount, final: chosen.name, score: holdoutScore });
        recordPending(store, exported, chosen.name, notes);
      });
      return finish(store, runDir, exported, chosen.name, notes);
    }
    const exported = withHoldout(exportOf(chosen), null);
    recordPending(store, exported, chosen.name, notes);
    return finish(store, runDir, exported, chosen.name, notes);
  } finally {
    await ownRunner?.close();
    if (!options.store) store.close();
  }
}

function withHoldout(exported: ExportedEnsemble, holdout: number | null): ExportedEnsemble {
  return ExportedEnsembleSchema.parse({ ...exported, estimates: { ...exported.estimates, holdout } });
}

function recordPending(store: RunStore, ensemble: ExportedEnsemble, final: string, notes: readonly string[]): void {
  store.putArtifact(PENDING_EXPORT, "export", { final, notes, ensemble });
}

/** Writes ensemble.json from the recorded export (atomically: a temporary file renamed), then marks the step done. */
function finish(store: RunStore, runDir: string, exported: ExportedEnsemble, final: string, notes: readonly string[]): FinalStepResult {
  const file = join(runDir, ENSEMBLE_FILE);
  try {
    writeFileSync(`${file}.tmp`, JSON.stringify(exported));
    renameSync(`${file}.tmp`, file);
  } catch (error) {
    // A full disk keeps no partial file; the record in the store is what a resume writes from.
    try {
      rmSync(`${file}.tmp`, { force: true });
    } catch {
      // A read-only folder has no partial file to remove.
    }
    throw error;
  }
  store.atomically(() => {
    store.setMeta("final_predictor", final);
    store.setMeta("final_step", "done");
    store.deleteArtifact(PENDING_EXPORT);
    store.addEvent("final_step", { status: "done", final, notes });
  });
  return { status: "done", message: null, final, exported: file, notes };
}

/** The build's choice if it can be exported, else the next best exportable by nested estimate (the single trial first among equals). */
function chooseExported(candidates: readonly Candidate[], build: EnsembleBuild, exportable: (c: Candidate) => boolean): Candidate | undefined {
  const preferred = candidates.find((c) => c.built.spec.kind === build.final);
  if (preferred && exportable(preferred)) return preferred;
  return candidates.filter(exportable)[0];
}

/** Runs every refit job on the runner, as many at once as it takes; outcomes by trial. */
async function refitAll(runner: JobRunner, jobs: readonly RefitJob[]): Promise<Map<number, RefitOutcome>> {
  const outcomes = new Map<number, RefitOutcome>();
  let next = 0;
  const lane = async (): Promise<void> => {
    while (next < jobs.length) {
      const job = jobs[next++];
      try {
        outcomes.set(job.trial, await runner.run(job));
      } catch (error) {
        if (error instanceof JobsRefusedError) throw error;
        outcomes.set(job.trial, { kind: "refit", trial: job.trial, model: null, fitSeconds: 0, error: error instanceof Error ? error.message : String(error) });
      }
    }
  };
  await Promise.all(Array.from({ length: Math.max(1, Math.min(runner.capacity, jobs.length)) }, lane));
  return outcomes;
}

function exportedEnsemble(input: {
  candidate: Candidate;
  training: Dataset;
  runId: string;
  metric: string;
  version: string;
  refits: Map<number, RefitOutcome>;
  trials: Map<number, { family: string; params: Record<string, unknown> }>;
  threshold: number | undefined;
}): ExportedEnsemble {
  const { candidate, training } = input;
  const spec = candidate.built.spec;
  const summary = candidate.built.summary;
  return {
    format: EXPORT_FORMAT,
    version: EXPORT_VERSION,
    run: input.runId,
    created_at: new Date().toISOString(),
    nightshift_version: input.version,
    task: training.task,
    target: training.target.kind === "classes" ? { name: training.target.name, labels: [...training.target.labels] } : { name: training.target.name },
    metric: input.metric,
    columns: datasetSchema(training),
    ...(input.threshold !== undefined ? { threshold: input.threshold } : {}),
    ensemble: spec,
    models: [...new Set(spec.members.map((m) => m.trial))].map((trial) => {
      const record = input.trials.get(trial) as { family: string; params: Record<string, unknown> };
      const model = input.refits.get(trial)?.model as ModelJson;
      return { trial, family: model.family, params: record.params, model };
    }),
    estimates: { out_of_fold: { mean: summary.mean, std: summary.std }, nested: { mean: summary.nested.mean, std: summary.nested.std }, holdout: null },
  };
}

function positiveRows(target: Int32Array | Float64Array): Uint8Array {
  return Uint8Array.from(target, (y) => (y === 1 ? 1 : 0));
}

function finiteOrNull(value: number): number | null {
  return Number.isFinite(value) ? value : null;
}
