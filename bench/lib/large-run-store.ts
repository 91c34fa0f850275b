import { join } from "node:path";
import { RunStore } from "@nightshift/store";

export const TRIALS = 5000;
export const FOLDS = 5;
const FAMILIES = ["logistic", "tree", "forest", "extra_trees", "boosted", "knn"];

/**
 * Writes the store of a finished run of `trials` (5,000) trials × 5 folds into `<runsDir>/large-run`:
 * fold scores from a fixed formula (no model is fitted), a spread of trial means with fold
 * noise around each so the tie test has work to do, and the events a coordinator writes.
 */
export function writeLargeRun(runsDir: string, trials = TRIALS): string {
  const folder = join(runsDir, "large-run");
  const store = RunStore.open(folder, { create: true });
  store.initMeta({ run_id: "large-run", metric: "average_precision", direction: "max", task: "binary", fold_count: String(FOLDS), test_fraction: String(1 / (FOLDS - 1)), state: "finished", created_at: "2026-12-01T22:00:00.000Z", plan: "{}" });
  store.addTrials(Array.from({ length: trials }, (_, trial) => ({ trial, family: FAMILIES[trial % FAMILIES.length], params: { depth: (trial % 13) + 2, l2: 10 ** ((trial % 7) - 3), trees: 50 + (trial % 350) } })));
  store.addEvent("run_started", { run: "large-run", trials, folds: FOLDS });
  for (let trial = 0; trial < trials; trial++) {
    const base = 0.2 + 0.5 * (((trial * 2654435761) % 4096) / 4096);
    let sum = 0;
    for (let fold = 0; fold < FOLDS; fold++) {
      const score = base + 0.02 * ((((trial + 1) * (fold + 3) * 40503) % 1000) / 1000 - 0.5);
      sum += score;
      store.commitFoldResult({ trial, fold, score, fitSeconds: 1 + (trial % 5), predictSeconds: 0.1, outOfFold: null, error: null }, { status: fold === FOLDS - 1 ? "done" : "running", message: null }, { kind: "fold_done", data: { trial, fold, score, error: null } });
    }
    store.addEvent("trial_done", { trial, family: FAMILIES[trial % FAMILIES.length], score: sum / FOLDS });
  }
  store.addEvent("run_finished", { run: "large-run", stoppedBy: "finished", foldsRun: trials * FOLDS });
  store.close();
  return folder;
}
