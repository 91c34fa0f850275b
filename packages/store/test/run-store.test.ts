import { mkdtempSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { RunStore } from "../src/run-store.js";

function freshFolder(): string {
  return join(mkdtempSync(join(tmpdir(), "nightshift-store-")), "run");
}

describe("run store", () => {
  it("keeps fold results with their predictions bit for bit across reopening", () => {
    const folder = freshFolder();
    const store = RunStore.open(folder, { create: true });
    store.addTrials([{ trial: 0, family: "forest", params: { trees: 10 } }]);
    const oof = Float32Array.from([0.1, 0.9, 1 / 3, 2 / 3]);
    expect(store.commitFoldResult({ trial: 0, fold: 1, score: 0.75, fitSeconds: 1, predictSeconds: 0.1, outOfFold: oof, error: null }, { status: "running", message: null })).toBe(true);
    store.close();
    const reopened = RunStore.open(folder, { readonly: true });
    expect(reopened.outOfFold(0).get(1)).toEqual(oof);
    expect(reopened.trials()[0]).toMatchObject({ trial: 0, family: "forest", params: { trees: 10 }, status: "running" });
    expect(reopened.integrityCheck()).toBe("ok");
    reopened.close();
  });

  it("stores a fold result once: a redone job does not duplicate it or its event", () => {
    const store = RunStore.open(freshFolder(), { create: true });
    store.addTrials([{ trial: 0, family: "tree", params: {} }]);
    const result = { trial: 0, fold: 0, score: 0.5, fitSeconds: 1, predictSeconds: 1, outOfFold: new Float32Array(2), error: null };
    const event = { kind: "fold", data: { trial: 0 } };
    expect(store.commitFoldResult(result, undefined, event)).toBe(true);
    expect(store.commitFoldResult(result, undefined, event)).toBe(false);
    expect(store.foldScores()).toHaveLength(1);
    expect(store.events().filter((e) => e.kind === "fold")).toHaveLength(1);
    store.close();
  });

  it("stores the writes of one atomically call all together or not at all", () => {
    const store = RunStore.open(freshFolder(), { create: true });
    expect(() =>
      store.atomically(() => {
        store.putArtifact("holdout", "holdout", { opened_at: "t" });
        store.addEvent("holdout_opened", {});
        throw new Error("failed before the last write");
      }),
    ).toThrow("failed before the last write");
    expect(store.artifact("holdout")).toBeUndefined();
    expect(store.events().filter((e) => e.kind === "holdout_opened")).toHaveLength(0);
    store.atomically(() => {
      store.putArtifact("holdout", "holdout", { opened_at: "t" });
      store.addEvent("holdout_opened", {});
    });
    expect(store.artifact("holdout")?.data).toEqual({ opened_at: "t" });
    store.deleteArtifact("holdout");
    expect(store.artifact("holdout")).toBeUndefined();
    store.close();
  });

  it("marks trials that halving drops as pruned", () => {
    const store = RunStore.open(freshFolder(), { create: true });
    store.addTrials([0, 1, 2].map((trial) => ({ trial, family: "tree", params: {} })));
    store.recordHalving([
      { batch: 0, rung: 0, trial: 0, score: 0.9, promoted: true },
      { batch: 0, rung: 0, trial: 1, score: 0.2, promoted: false },
      { batch: 0, rung: 0, trial: 2, score: 0.1, promoted: false },
    ]);
    expect(store.trials().map((t) => t.status)).toEqual(["queued", "pruned", "pruned"]);
    store.close();
  });

  it("refuses to open a folder without a store unless asked to create one", () => {
    expect(() => RunStore.open(freshFolder())).toThrow(/no run store/);
  });
});
