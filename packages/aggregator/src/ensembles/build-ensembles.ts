import { isBetter, type Metric } from "@nightshift/core";
import type { EnsembleSummary } from "../board.js";
import { correctedPairedTTest } from "../corrected-t-test.js";
import type { EnsembleKind, EnsembleSpec } from "./ensemble-spec.js";
import { greedySelection } from "./greedy-selection.js";
import { type EnsembleFitter, nestedFoldScores, nestedSingleScores, predictPositional, scoreByFold } from "./nested-estimate.js";
import type { OutOfFoldSet } from "./out-of-fold-set.js";
import { softVotingWeights } from "./soft-voting.js";
import { fitStacker } from "./stacking.js";

/** The plan's `ensemble` settings. */
export interface EnsembleSettings {
  readonly selection: { readonly rounds: number; readonly candidates: number; readonly init: number };
  readonly stacking: { readonly top: number; readonly non_negative: boolean };
  readonly voting: { readonly top: number };
}

/** One ensemble fitted on every out-of-fold row, with its honest estimate. */
export interface BuiltEnsemble {
  readonly spec: EnsembleSpec;
  readonly summary: EnsembleSummary;
  /** Its predictions on every training row (stored layout), from the weights fitted on all of them. */
  readonly outOfFold: Float64Array;
  readonly folds: Float64Array;
  readonly nestedFolds: Float64Array;
}

export interface EnsembleBuild {
  readonly ensembles: BuiltEnsemble[];
  /** The best single trial (the board's first), as a one-member predictor, with its stored fold scores. */
  readonly single: BuiltEnsemble;
  /** Which predictor to export: the best nested estimate; a simpler one wins ties (single, voting, selection, stacking). */
  readonly final: EnsembleKind;
  readonly notes: string[];
}

/** A method: how it fits on some rows, from how many of the best candidates. */
interface Method {
  readonly kind: Exclude<EnsembleKind, "single">;
  readonly top: number;
  readonly fit: EnsembleFitter;
}

/**
 * Builds every ensemble of a run from its out-of-fold set: greedy selection, stacking and soft
 * voting over the best candidates, each fitted on all out-of-fold rows (its `mean`/`std` per
 * outer fold, optimistic) and estimated honestly by nested cross-validation over the
 * ensembling step (`nested`), compared with the best single trial by the corrected resampled
 * t-test on the paired outer folds (`testFraction` = n_test / n_train; METHODS.md §4).
 * Pure: the same set and settings give the same ensembles.
 */
export function buildEnsembles(set: OutOfFoldSet, metric: Metric, settings: EnsembleSettings, testFraction: number): EnsembleBuild {
  const available = set.trials.length;
  if (available === 0) throw new RangeError("no finished trial with out-of-fold predictions: no ensemble can be built");
  const notes: string[] = [];
  const { task, width } = set;
  const positional = (kind: EnsembleKind, weights: Float64Array, extra: Partial<EnsembleSpec> = {}): EnsembleSpec => {
    // A member with weight 0 (never picked, or a non-negative stacker's zero) adds nothing: it is
    // neither refitted nor exported (one is kept if all are 0). The board still lists every stacker coefficient.
    const members = Array.from(weights, (weight, m) => ({ trial: m, weight })).filter((m) => m.weight !== 0);
    return { kind, members: members.length > 0 ? members : [{ trial: 0, weight: weights[0] }], ...extra };
  };

  let curve: Float64Array = new Float64Array(0);
  const methods: Method[] = [
    {
      kind: "voting",
      top: settings.voting.top,
      fit: (predictions) => positional("voting", softVotingWeights(predictions.length)),
    },
    {
      kind: "selection",
      top: settings.selection.candidates,
      fit: (predictions, target) => {
        const selection = greedySelection(predictions, target, task, width, metric, { rounds: settings.selection.rounds, init: settings.selection.init });
        curve = selection.curve;
        return positional("selection", selection.weights);
      },
    },
    {
      kind: "stacking",
      top: settings.stacking.top,
      fit: (predictions, target) => {
        const stacker = fitStacker(predictions, target, task, width, { nonNegative: settings.stacking.non_negative });
        return positional("stacking", stacker.weights, { intercepts: Array.from(stacker.intercepts), link: stacker.link, clip: stacker.clip });
      },
    },
  ];

  const bestFolds = set.foldScores[0];
  const ensembles = methods.map((method): BuiltEnsemble => {
    const top = Math.min(method.top, available);
    let note: string | undefined;
    if (top < method.top) {
      note = `${available} finished trial${available === 1 ? "" : "s"} with out-of-fold predictions, fewer than the ${method.top} asked; using ${available}`;
      notes.push(`${method.kind}: ${note}`);
    }
    const candidates = set.trials.slice(0, top);
    const nestedFolds = nestedFoldScores(set, metric, top, method.fit);
    // Fitted last, so `curve` holds the selection curve on all rows.
    const predictions = set.predictions.slice(0, top);
    const fitted = method.fit(predictions, set.target);
    const outOfFold = predictPositional(fitted, set, predictions, set.rowCount);
    const spec: EnsembleSpec = { ...fitted, members: fitted.members.map((m) => ({ trial: candidates[m.trial], weight: m.weight })) };
    const listed = method.kind === "stacking" ? candidates.map((trial) => ({ trial, weight: spec.members.find((m) => m.trial === trial)?.weight ?? 0 })) : spec.members;
    const folds = scoreByFold(metric, set, outOfFold);
    const oof = meanAndStd(folds);
    const nested = meanAndStd(nestedFolds);
    const test = correctedPairedTTest(nestedFolds, bestFolds, testFraction);
    const summary: EnsembleSummary = {
      kind: method.kind,
      mean: oof.mean,
      std: oof.std,
      nested: {
        mean: nested.mean,
        std: nested.std,
        folds: Array.from(nestedFolds, finiteOrNull),
        tie_with_best: !(test.pValue < 0.05),
        p_value: finiteOrNull(test.pValue),
      },
      members: listed,
      curve: method.kind === "selection" ? Array.from(curve, finiteOrNull) : [],
      ...(spec.intercepts ? { intercepts: spec.intercepts } : {}),
      candidates: top,
      ...(note ? { note } : {}),
    };
    return { spec, summary, outOfFold, folds, nestedFolds };
  });

  const singleTrial = set.trials[0];
  const singleSpec: EnsembleSpec = { kind: "single", members: [{ trial: singleTrial, weight: 1 }] };
  const singleNested = nestedSingleScores(set, metric);
  const singleOof = meanAndStd(bestFolds);
  const singleNestedSummary = meanAndStd(singleNested);
  const single: BuiltEnsemble = {
    spec: singleSpec,
    summary: {
      kind: "voting",
      mean: singleOof.mean,
      std: singleOof.std,
      nested: { mean: singleNestedSummary.mean, std: singleNestedSummary.std, folds: Array.from(singleNested, finiteOrNull) },
      members: singleSpec.members,
      curve: [],
      candidates: available,
    },
    outOfFold: Float64Array.from(set.predictions[0]),
    folds: bestFolds,
    nestedFolds: singleNested,
  };

  let final: EnsembleKind = "single";
  let finalScore = singleNestedSummary.mean ?? Number.NaN;
  for (const e of ensembles) {
    const score = e.summary.nested.mean ?? Number.NaN;
    if (isBetter(metric, score, finalScore)) {
      final = e.spec.kind;
      finalScore = score;
    }
  }
  for (const e of ensembles) e.summary.final = e.spec.kind === final;
  return { ensembles, single, final, notes };
}

function meanAndStd(values: Float64Array): { mean: number | null; std: number | null } {
  let sum = 0;
  let count = 0;
  for (const v of values) {
    if (!Number.isFinite(v)) return { mean: null, std: null };
    sum += v;
    count++;
  }
  if (count === 0) return { mean: null, std: null };
  const mean = sum / count;
  if (count === 1) return { mean, std: null };
  let squares = 0;
  for (const v of values) squares += (v - mean) ** 2;
  return { mean, std: Math.sqrt(squares / (count - 1)) };
}

function finiteOrNull(value: number): number | null {
  return Number.isFinite(value) ? value : null;
}
