// Reads a run store and prints what the disk tests check, as one JSON line. The disk tests run it inside
// the private mount namespace of their small disk: from outside, the store is reachable only through
// /proc/<pid>/root, a link SQLite resolves to the wrong folder.
// Usage: node store-probe.mjs <run folder> full          the stored results, integrity, hold-out openings
//        node store-probe.mjs <run folder> folds=<n>     waits until at least n fold results are stored
//        node store-probe.mjs <run folder> state=<s>     waits until the run's state is s
import { RunStore } from "@nightshift/store";

const [runDir, mode] = process.argv.slice(2);

/** What is stored; while waiting, a store not yet created or without its schema counts as absent. */
function read(full) {
  if (full) return readStore(true);
  try {
    return readStore(false);
  } catch {
    return { exists: false };
  }
}

function readStore(full) {
  if (!RunStore.exists(runDir)) return { exists: false };
  const store = RunStore.open(runDir, { readonly: true });
  try {
    const out = { exists: true, folds: store.foldScores().length, state: store.getMeta("state") ?? null };
    if (full) {
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
    return out;
  } finally {
    store.close();
  }
}

if (mode === "full") {
  console.log(JSON.stringify(read(true)));
} else {
  const [key, value] = mode.split("=");
  const reached = (now) => now.exists && (key === "folds" ? now.folds >= Number(value) : now.state === value);
  let now = read(false);
  while (!reached(now)) {
    await new Promise((r) => setTimeout(r, 10));
    now = read(false);
  }
  console.log(JSON.stringify(now));
}
