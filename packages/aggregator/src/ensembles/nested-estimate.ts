import type { Metric } from "@nightshift/core";
import { type OutOfFoldSet, predictionRows, rowsOfFold, targetRows } from "./out-of-fold-set.js";
import { combinePredictions, toFullWidth } from "./combine-predictions.js";
import type { EnsembleSpec } from "./ensemble-spec.js";

/**
 * Fits an ensemble of some kind on some rows: given the candidates' predictions on those rows
 * (best candidate first) and the rows' target, returns its spec with each member's `trial`
 * being the member's position in `predictions`.
 */
export type EnsembleFitter = (predictions: readonly Float32Array[], target: Int32Array | Float64Array) => EnsembleSpec;

/** Predictions of a positional spec (members named by position) from the candidates' predictions. */
export function predictPositional(spec: EnsembleSpec, set: Pick<OutOfFoldSet, "task" | "width">, predictions: readonly Float32Array[], rowCount: number): Float64Array {
  return combinePredictions(spec, set.task, set.width, spec.members.map((m) => predictions[m.trial]), rowCount);
}

/** The metric of stored-layout predictions. */
export function scoreStored(metric: Metric, set: Pick<OutOfFoldSet, "task" | "width">, target: Int32Array | Float64Array, stored: Float64Array): number {
  const full = toFullWidth(set.task, stored);
  return metric.score(target, full, set.task === "binary" ? 2 : set.width);
}

/** The metric on each outer fold's rows of predictions covering every row. */
export function scoreByFold(metric: Metric, set: OutOfFoldSet, stored: Float64Array): Float64Array {
  const scores = new Float64Array(set.foldCount);
  for (let f = 0; f < set.foldCount; f++) {
    const rows = rowsOfFold(set, f, true);
    scores[f] = scoreStored(metric, set, targetRows(set.target, rows), predictionRows(stored, set.width, rows));
  }
  return scores;
}

/** Candidate indices ranked by their mean stored score over the outer folds other than `fold`. */
export function rankWithoutFold(set: OutOfFoldSet, metric: Metric, fold: number): number[] {
  const means = set.foldScores.map((scores) => {
    let sum = 0;
    let count = 0;
    for (let f = 0; f < scores.length; f++) {
      if (f === fold || Number.isNaN(scores[f])) continue;
      sum += scores[f];
      count++;
    }
    return count === 0 ? Number.NaN : sum / count;
  });
  const sign = metric.direction === "max" ? -1 : 1;
  return means
    .map((mean, index) => ({ mean, index }))
    .sort((a, b) => {
      if (Number.isNaN(a.mean) !== Number.isNaN(b.mean)) return Number.isNaN(a.mean) ? 1 : -1;
      return a.mean !== b.mean && !Number.isNaN(a.mean) ? sign * (a.mean - b.mean) : a.index - b.index;
    })
    .map((e) => e.index);
}

/**
 * Honest estimate of an ensemble method by nested cross-validation over the ensembling step
 * (METHODS.md §2; Varma & Simon 2006, Cawley & Talbot 2010 on selection bias): for each outer
 * fold, the whole ensembling pipeline (ranking the candidates, keeping the top `top`, fitting
 * the weights or the stacker) sees only the other folds' out-of-fold rows and scores, and the
 * result is scored on this fold. The members' own predictions stay out-of-fold throughout.
 * Returns the per-fold scores.
 */
export function nestedFoldScores(set: OutOfFoldSet, metric: Metric, top: number, fit: EnsembleFitter): Float64Array {
  const scores = new Float64Array(set.foldCount);
  for (let f = 0; f < set.foldCount; f++) {
    const chosen = rankWithoutFold(set, metric, f).slice(0, top);
    const inner = rowsOfFold(set, f, false);
    const outer = rowsOfFold(set, f, true);
    const spec = fit(
      chosen.map((c) => predictionRows(set.predictions[c], set.width, inner)),
      targetRows(set.target, inner),
    );
    const predicted = predictPositional(
      spec,
      set,
      chosen.map((c) => predictionRows(set.predictions[c], set.width, outer)),
      outer.length,
    );
    scores[f] = scoreStored(metric, set, targetRows(set.target, outer), predicted);
  }
  return scores;
}

/** The honest counterpart of "take the best single trial": chosen on the other folds, scored on this one. */
export function nestedSingleScores(set: OutOfFoldSet, metric: Metric): Float64Array {
  const scores = new Float64Array(set.foldCount);
  for (let f = 0; f < set.foldCount; f++) scores[f] = set.foldScores[rankWithoutFold(set, metric, f)[0]][f];
  return scores;
}
