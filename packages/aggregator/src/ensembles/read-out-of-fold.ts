import { type Dataset, storedWidth } from "@nightshift/core";
import type { RunStore } from "@nightshift/store";
import { assembleOutOfFold, type OutOfFoldSet, rankTrials, type TrialOutOfFold } from "./out-of-fold-set.js";

interface Ranked {
  readonly trial: number;
  readonly rankScore: number;
  readonly foldScores: Float64Array;
}

/**
 * Reads the ensemble candidates of a run from its store: every finished trial with predictions
 * on every fold of the first repeat, ranked as the board ranks them. Only the predictions that
 * some ensemble can use are loaded: the best `top` overall and, for the nested estimate, the
 * best `top` by the mean score without each outer fold.
 * `training` is the run's training dataset (the run folder's dataset pack), for the target.
 */
export function readOutOfFold(store: RunStore, training: Dataset, direction: "max" | "min", top: number): OutOfFoldSet {
  const outer = store.folds().filter((f) => f.repeat === 0).sort((a, b) => a.index - b.index);
  const foldIds = outer.map((f) => f.fold);
  const scoresByTrial = new Map<number, Map<number, number>>();
  for (const r of store.foldScores()) {
    if (r.error !== null || r.score === null) continue;
    const byFold = scoresByTrial.get(r.trial) ?? new Map<number, number>();
    byFold.set(r.fold, r.score);
    scoresByTrial.set(r.trial, byFold);
  }
  const eligible: Ranked[] = [];
  for (const t of store.trials()) {
    if (t.status !== "done") continue;
    const byFold = scoresByTrial.get(t.trial);
    if (!byFold || !foldIds.every((f) => byFold.has(f))) continue;
    let sum = 0;
    for (const s of byFold.values()) sum += s;
    eligible.push({ trial: t.trial, rankScore: sum / byFold.size, foldScores: Float64Array.from(foldIds, (f) => byFold.get(f) as number) });
  }
  const ranked = rankTrials(eligible, direction);
  const wanted = new Set(ranked.slice(0, top).map((r) => r.trial));
  const sign = direction === "max" ? -1 : 1;
  for (let f = 0; f < foldIds.length; f++) {
    const withoutFold = ranked.map((r) => {
      let sum = 0;
      for (let g = 0; g < r.foldScores.length; g++) if (g !== f) sum += r.foldScores[g];
      return { trial: r.trial, mean: sum / Math.max(1, r.foldScores.length - 1) };
    });
    withoutFold.sort((a, b) => (a.mean !== b.mean ? sign * (a.mean - b.mean) : a.trial - b.trial));
    for (const r of withoutFold.slice(0, top)) wanted.add(r.trial);
  }
  const trials: TrialOutOfFold[] = [];
  for (const r of ranked) {
    if (!wanted.has(r.trial)) continue;
    const byFold = store.outOfFold(r.trial);
    if (!foldIds.every((f) => byFold.has(f))) continue;
    trials.push({ trial: r.trial, rankScore: r.rankScore, foldScores: r.foldScores, folds: foldIds.map((f) => byFold.get(f) as Float32Array) });
  }
  const target = training.target;
  const classCount = target.kind === "classes" ? target.labels.length : 1;
  return assembleOutOfFold({
    task: training.task,
    classCount,
    width: storedWidth(training.task, classCount),
    target: target.kind === "classes" ? target.codes : target.values,
    foldTests: outer.map((f) => f.test),
    trials,
  });
}
