// Reads a run store and prints what the disk tests check, as one JSON line. The disk tests run it inside
// the private mount namespace of their small disk: from outside, the store is reachable only through
// /proc/<pid>/root, a link SQLite resolves to the wrong folder.
// Usage: node store-probe.mjs <run folder> poll|full
import { RunStore } from "@nightshift/store";

const [runDir, mode] = process.argv.slice(2);
if (!RunStore.exists(runDir)) {
  console.log(JSON.stringify({ exists: false }));
} else {
  const store = RunStore.open(runDir, { readonly: true });
  try {
    const out = { exists: true, folds: store.foldScores().length, state: store.getMeta("state") ?? null };
    if (mode === "full") {
      const predictions = {};
      for (const t of store.trials()) for (const [fold, oof] of store.outOfFold(t.trial)) predictions[`${t.trial}/${fold}`] = Array.from(oof);
      Object.assign(out, {
        integrity: store.integrityCheck(),
        scores: store.foldScores(),
        predictions,
        openings: store.events(0, 100_000).filter((e) => e.kind === "holdout_opened").length,
        openedAt: store.artifact("holdout")?.data?.opened_at,
      });
    }
    console.log(JSON.stringify(out));
  } finally {
    store.close();
  }
}
