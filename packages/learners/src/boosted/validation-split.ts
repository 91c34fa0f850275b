import type { Rng } from "@nightshift/core";

/** Positions (0..n-1 of the training view) that fit trees and that watch for early stopping. */
export interface ValidationSplit {
  readonly fit: Uint32Array;
  readonly validation: Uint32Array;
}

/**
 * Holds out `fraction` of the rows for early stopping. With classes, each class gives
 * round(fraction · n_c) rows, but always keeps at least one row for fitting, so the class
 * proportions of both parts match the whole (stratified). Both lists come out in position order.
 */
export function validationSplit(n: number, fraction: number, rng: Rng, classes: Int32Array | null, classCount: number): ValidationSplit {
  const held = new Uint8Array(n);
  const groups = classes === null ? 1 : classCount;
  const size = new Int32Array(groups + 1);
  for (let i = 0; i < n; i++) size[(classes === null ? 0 : classes[i]) + 1]++;
  for (let c = 0; c < groups; c++) size[c + 1] += size[c];
  const byGroup = new Uint32Array(n);
  const next = size.slice(0, groups);
  for (let i = 0; i < n; i++) byGroup[next[classes === null ? 0 : classes[i]]++] = i;
  let heldCount = 0;
  for (let c = 0; c < groups; c++) {
    const from = size[c];
    const count = size[c + 1] - from;
    const take = Math.min(Math.round(fraction * count), count - 1);
    // Partial Fisher–Yates: the first `take` positions of the shuffled group are held out.
    for (let i = 0; i < take; i++) {
      const j = i + rng.int(count - i);
      const tmp = byGroup[from + i];
      byGroup[from + i] = byGroup[from + j];
      byGroup[from + j] = tmp;
      held[byGroup[from + i]] = 1;
    }
    heldCount += Math.max(0, take);
  }
  const fit = new Uint32Array(n - heldCount);
  const validation = new Uint32Array(heldCount);
  let a = 0;
  let b = 0;
  for (let i = 0; i < n; i++) {
    if (held[i] === 1) validation[b++] = i;
    else fit[a++] = i;
  }
  return { fit, validation };
}
