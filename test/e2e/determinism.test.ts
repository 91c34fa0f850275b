import { spawnSync } from "node:child_process";
import { join } from "node:path";
import { RunStore } from "@nightshift/store";
import { describe, expect, it } from "vitest";
import { allPredictions, nightshift, nightshiftAsync, storedFolds, SMALL_FAMILIES, tempDir, withoutTimings, writePlan, writeSmallTurbines } from "./helpers.js";

function plan(halving: boolean): string {
  return `name: determinism
seed: 7
data: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id], holdout: 0.2 }
metric: average_precision
folds: { k: 3 }
budget: { trials: ${halving ? 9 : 8} }
${halving ? "halving: { eta: 3 }\n" : ""}${SMALL_FAMILIES}`;
}

describe("determinism of a run", () => {
  it.each([false, true])("gives the same board and stored predictions on 1 and 2 workers (halving: %s)", (halving) => {
    const dir = tempDir("det");
    writeSmallTurbines(dir);
    const planPath = writePlan(dir, plan(halving));
    const one = nightshift(["run", planPath, "--run-dir", join(dir, "one"), "--workers", "1", "--json"], dir);
    expect(one.stderr).toBe("");
    expect(one.code).toBe(0);
    const two = nightshift(["run", planPath, "--run-dir", join(dir, "two"), "--workers", "2", "--json"], dir);
    expect(two.code).toBe(0);
    const boardOne = JSON.parse(one.stdout);
    const boardTwo = JSON.parse(two.stdout);
    expect(boardOne.rows.length).toBe(halving ? 9 : 8);
    if (halving) expect(boardOne.rows.filter((r: { status: string }) => r.status === "pruned").length).toBeGreaterThan(0);
    expect(withoutTimings(boardTwo)).toEqual(withoutTimings(boardOne));
    expect(allPredictions(join(dir, "two"))).toEqual(allPredictions(join(dir, "one")));
  });

  it("resumes a run killed with SIGKILL and ends with the same board and predictions", async () => {
    const dir = tempDir("kill");
    writeSmallTurbines(dir);
    const planPath = writePlan(dir, plan(false));
    const reference = nightshift(["run", planPath, "--run-dir", join(dir, "whole"), "--json"], dir);
    expect(reference.code).toBe(0);

    const killedDir = join(dir, "killed");
    const child = nightshiftAsync(["run", planPath, "--run-dir", killedDir, "--workers", "1", "--quiet"], dir);
    const exited = new Promise<void>((resolveExit) => child.on("exit", () => resolveExit()));
    // Wait until some, not all, fold results are committed, then kill without warning.
    while (storedFolds(killedDir) < 5) await new Promise((r) => setTimeout(r, 50));
    child.kill("SIGKILL");
    await exited;
    const partial = RunStore.open(killedDir, { readonly: true });
    const before = partial.foldScores().length;
    expect(before).toBeLessThan(24);
    partial.close();

    const resumed = nightshift(["run", planPath, "--run-dir", killedDir, "--json"], dir);
    expect(resumed.code).toBe(0);
    expect(withoutTimings(JSON.parse(resumed.stdout))).toEqual(withoutTimings(JSON.parse(reference.stdout)));
    expect(allPredictions(killedDir)).toEqual(allPredictions(join(dir, "whole")));
    const store = RunStore.open(killedDir, { readonly: true });
    expect(store.integrityCheck()).toBe("ok");
    store.close();
    expect(spawnSync("true").status).toBe(0);
  });
});
