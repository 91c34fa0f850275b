/**
 * Successive halving over folds (Jamieson & Talwalkar 2016; METHODS.md §3): a batch of
 * trials runs its first fold(s); the best 1/eta by their mean score so far go on to more
 * folds, until the survivors have run them all. Decisions are taken per batch, once all
 * of the batch's jobs of a rung are in, from the scores alone: never by arrival order.
 */

/** Folds run by the end of each rung: 1, eta, eta², ... capped by, and ending at, the fold count. */
export function rungFolds(foldCount: number, eta: number): number[] {
  const rungs: number[] = [];
  for (let folds = 1; folds < foldCount; folds *= eta) rungs.push(folds);
  rungs.push(foldCount);
  return rungs;
}

/** Batch size that leaves one survivor in the last rung when nothing fails: eta^(rungs - 1). */
export function defaultBatchSize(foldCount: number, eta: number): number {
  return eta ** (rungFolds(foldCount, eta).length - 1);
}

export interface RungEntry {
  readonly trial: number;
  /** Mean score over the rung's folds; null when a fold failed (ranks last). */
  readonly score: number | null;
}

/**
 * Which trials of a rung go on: the best floor(n / eta) (at least one), ranked by score in
 * the metric's direction, ties broken by the lower trial index. Failed trials never go on.
 */
export function promote(entries: readonly RungEntry[], eta: number, direction: "max" | "min"): Set<number> {
  const ranked = entries
    .filter((e) => e.score !== null && Number.isFinite(e.score))
    .sort((a, b) => {
      const diff = direction === "max" ? (b.score as number) - (a.score as number) : (a.score as number) - (b.score as number);
      return diff !== 0 ? diff : a.trial - b.trial;
    });
  const keep = Math.max(1, Math.floor(entries.length / eta));
  return new Set(ranked.slice(0, keep).map((e) => e.trial));
}
