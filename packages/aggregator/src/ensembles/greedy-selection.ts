import { isBetter, type Metric, type Task } from "@nightshift/core";
import { createHillclimbScorer, type HillclimbScorer, valueRange, type ValueRange } from "./hillclimb-scorer.js";

export interface GreedySelectionOptions {
  /** Greedy rounds after the initialisation, each adding one pick. */
  readonly rounds: number;
  /** Sorted initialisation: start with this many of the best single candidates, once each (0 = empty start). */
  readonly init: number;
}

export interface GreedySelection {
  /** Times each candidate is picked in the kept prefix. */
  readonly counts: Uint32Array;
  /** counts / picks in the kept prefix: the averaging weights, summing to 1. */
  readonly weights: Float64Array;
  /** Candidate index of every pick, in order (initialisation first), over all rounds. */
  readonly picks: Int32Array;
  /**
   * The hillclimb curve: the score after the initialisation (when `init` > 0) and after each
   * round, on the rows selection ran on (optimistic: the picks were chosen on them).
   */
  readonly curve: Float64Array;
  /** Index into `curve` of the kept prefix: the best score, the earliest point among equals. */
  readonly best: number;
  /** Picks in the kept prefix. */
  readonly size: number;
  /** Number of exact metric evaluations made (the rest were ruled out by bounds). */
  readonly evaluations: number;
}

/**
 * Greedy ensemble selection with replacement (Caruana, Niculescu-Mizil, Crew & Ksikes,
 * "Ensemble Selection from Libraries of Models", ICML 2004; METHODS.md §1).
 *
 * The ensemble after t picks predicts (1/t)·Σ picks; a candidate picked c times has weight c/t.
 * Each round adds the candidate whose addition gives the best metric, even when that is worse
 * than before (with replacement, re-picking a member re-weights it). A running sum of the picks
 * makes a candidate's trial cost one pass over the rows plus the metric, never a re-average.
 * For metrics with bounds (binary AP and ROC AUC) candidates are tried in order of their
 * optimistic bound and the round stops as soon as no remaining bound can reach the best exact
 * score, so the chosen candidate is exactly the one a full search would choose.
 *
 * Ties: among candidates with exactly equal scores the lowest index wins; candidates are in
 * board order, so that is the better single trial. The kept ensemble is the prefix of picks
 * with the best curve score, the earliest (smallest) one among equals.
 *
 * `predictions[m]` are candidate m's out-of-fold predictions in the stored layout, rows × width.
 */
export function greedySelection(
  predictions: readonly Float32Array[],
  target: Int32Array | Float64Array,
  task: Task,
  width: number,
  metric: Metric,
  options: GreedySelectionOptions,
  scorer: HillclimbScorer = createHillclimbScorer(metric, task, target, width),
): GreedySelection {
  const candidates = predictions.length;
  if (candidates === 0) throw new RangeError("greedy selection needs at least one candidate");
  if (!Number.isInteger(options.rounds) || options.rounds < 0) throw new RangeError(`rounds must be a non-negative integer, got ${options.rounds}`);
  const init = Math.min(Math.max(0, Math.floor(options.init)), candidates);
  if (init === 0 && options.rounds === 0) throw new RangeError("greedy selection needs at least one round or an initialisation");
  const size = target.length * width;
  for (const p of predictions) if (p.length !== size) throw new RangeError(`candidate predictions hold ${p.length} values, expected ${size}`);

  const sum = scorer.sum;
  sum.fill(0);
  const picks = new Int32Array(init + options.rounds);
  const curve = new Float64Array((init > 0 ? 1 : 0) + options.rounds);
  let picked = 0;
  let evaluations = 0;

  if (init > 0) {
    // Sorted initialisation: the candidates' own scores on these rows, best first, lowest index among equals.
    const single = new Float64Array(candidates);
    for (let m = 0; m < candidates; m++) single[m] = scorer.score(predictions[m], 1);
    evaluations += candidates;
    const order = Array.from({ length: candidates }, (_, m) => m).sort((a, b) => (isBetter(metric, single[a], single[b]) ? -1 : isBetter(metric, single[b], single[a]) ? 1 : a - b));
    for (let k = 0; k < init; k++) {
      const p = predictions[order[k]];
      for (let i = 0; i < size; i++) sum[i] += p[i];
      picks[picked++] = order[k];
    }
    curve[0] = scorer.score(null, picked);
    evaluations++;
  }

  const ranges: ValueRange[] = scorer.bounded ? predictions.map(valueRange) : [];
  const bounds = new Float64Array(2);
  const optimistic = new Float64Array(candidates);
  const order = Array.from({ length: candidates }, (_, m) => m);
  for (let round = 0; round < options.rounds; round++) {
    const divisor = picked + 1;
    let best = -1;
    let bestScore = Number.NaN;
    const consider = (m: number, score: number): void => {
      if (best < 0 || isBetter(metric, score, bestScore) || (!isBetter(metric, bestScore, score) && m < best)) {
        best = m;
        bestScore = score;
      }
    };
    if (scorer.bounded) {
      const sumRange = valueRange(sum);
      // Optimistic bound in "larger is better" form; an undefined bound must be tried.
      for (let m = 0; m < candidates; m++) {
        scorer.bounds(sumRange, predictions[m], ranges[m], bounds);
        const value = metric.direction === "max" ? bounds[1] : -bounds[0];
        optimistic[m] = Number.isNaN(value) ? Infinity : value;
      }
      order.sort((a, b) => optimistic[b] - optimistic[a] || a - b);
      for (const m of order) {
        if (best >= 0 && !Number.isNaN(bestScore) && optimistic[m] < (metric.direction === "max" ? bestScore : -bestScore)) break;
        consider(m, scorer.score(predictions[m], divisor, { sum: sumRange, add: ranges[m] }));
        evaluations++;
      }
    } else {
      for (let m = 0; m < candidates; m++) consider(m, scorer.score(predictions[m], divisor));
      evaluations += candidates;
    }
    const p = predictions[best];
    for (let i = 0; i < size; i++) sum[i] += p[i];
    picks[picked++] = best;
    curve[(init > 0 ? 1 : 0) + round] = bestScore;
  }

  let bestPoint = 0;
  for (let k = 1; k < curve.length; k++) if (isBetter(metric, curve[k], curve[bestPoint])) bestPoint = k;
  const kept = init > 0 ? init + bestPoint : bestPoint + 1;
  const counts = new Uint32Array(candidates);
  for (let k = 0; k < kept; k++) counts[picks[k]]++;
  const weights = Float64Array.from(counts, (c) => c / kept);
  return { counts, weights, picks, curve, best: bestPoint, size: kept, evaluations };
}
