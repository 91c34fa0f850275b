import type { ChildProcess } from "node:child_process";
import { createRng } from "@nightshift/core";
import { RunStore } from "@nightshift/store";
import { storedFolds } from "../e2e/helpers.js";

export const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** A kill moment: after a number of committed fold results, or after a delay from the start of the process. */
export type Moment = { kind: "folds"; atLeast: number } | { kind: "delay"; ms: number };

/**
 * `kills` seeded moments over a run of `total` fold results: most after a fold count, the
 * rest (`kills - counted`) after a delay, interleaved so some land in start-up, some in a
 * resume, some mid-fold.
 */
export function killMoments(label: string, seed: number, total: number, kills: number, counted = 14): Moment[] {
  const rng = createRng(label, seed);
  const counts = Array.from({ length: counted }, () => 1 + rng.int(total - 1)).sort((a, b) => a - b);
  const delays = Array.from({ length: kills - counts.length }, () => ({ kind: "delay" as const, ms: 50 + rng.int(1200) }));
  const moments: Moment[] = counts.map((atLeast) => ({ kind: "folds", atLeast }));
  for (const d of delays) moments.splice(rng.int(moments.length + 1), 0, d);
  return moments;
}

/**
 * Waits for a moment, then SIGKILLs the process. A count-based moment waits for one new fold
 * result where possible (so kills land after real progress), never for the last one.
 */
export async function killAt(child: ChildProcess, exited: Promise<number | null>, runDir: string, moment: Moment, total: number): Promise<"killed" | "finished"> {
  const target = moment.kind === "folds" ? Math.min(total - 1, Math.max(moment.atLeast, storedFolds(runDir) + 1)) : 0;
  let finished = false;
  void exited.then(() => {
    finished = true;
  });
  if (moment.kind === "delay") {
    await Promise.race([sleep(moment.ms), exited]);
  } else {
    while (!finished && storedFolds(runDir) < target) await sleep(15);
  }
  if (finished) return "finished";
  child.kill("SIGKILL");
  await exited;
  return "killed";
}

/** A run folder's store after the faults: its integrity check, how many fold results it holds, and how many distinct trial/fold keys. */
export function storeAudit(runDir: string): { integrity: string; folds: number; distinct: number } {
  const store = RunStore.open(runDir, { readonly: true });
  try {
    const keys = store.foldScores().map((r) => `${r.trial}/${r.fold}`);
    return { integrity: store.integrityCheck(), folds: keys.length, distinct: new Set(keys).size };
  } finally {
    store.close();
  }
}
