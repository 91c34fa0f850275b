import { join } from "node:path";
import { RunStore } from "@nightshift/store";
import { describe, expect, it } from "vitest";
import { nightshift, nightshiftAsync, storedFolds, SMALL_FAMILIES, tempDir, writePlan, writeSmallTurbines } from "./helpers.js";

describe("stopping and limits", () => {
  it("stops cleanly on Ctrl-C, says how to resume, and the resumed run completes", async () => {
    const dir = tempDir("sigint");
    writeSmallTurbines(dir);
    const planPath = writePlan(dir, `name: sigint\ndata: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id] }\nfolds: { k: 3 }\nbudget: { trials: 12 }\n${SMALL_FAMILIES}`);
    const runDir = join(dir, "r");
    const child = nightshiftAsync(["run", planPath, "--run-dir", runDir, "--workers", "1"], dir);
    let stderr = "";
    child.stderr?.on("data", (chunk: Buffer) => (stderr += chunk.toString()));
    const exited = new Promise<number | null>((resolve) => child.on("exit", (code) => resolve(code)));
    while (storedFolds(runDir) < 3) await new Promise((r) => setTimeout(r, 50));
    child.kill("SIGINT");
    const code = await exited;
    expect(code).toBe(130);
    expect(stderr).toMatch(/stopping after the jobs in flight/);
    expect(stderr).toMatch(/resume with: nightshift run .*--run-dir/);
    const store = RunStore.open(runDir, { readonly: true });
    expect(store.integrityCheck()).toBe("ok");
    expect(store.getMeta("state")).toBe("interrupted");
    store.close();
    const resumed = nightshift(["run", planPath, "--run-dir", runDir, "--json"], dir);
    expect(resumed.code).toBe(0);
    expect(JSON.parse(resumed.stdout).rows.every((r: { status: string }) => r.status === "done")).toBe(true);
  });

  it("records a trial over its time limit as timed out and goes on with the others", () => {
    const dir = tempDir("timeout");
    writeSmallTurbines(dir);
    // 0.0005 minutes over 3 folds = 10 ms per fold job: the big forest cannot make it, the tiny tree can.
    const planPath = writePlan(
      dir,
      `name: timeout\ndata: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id] }\nfolds: { k: 3 }\nbudget: { trials: 6, trial_minutes: 0.0005 }\nfamilies:\n  forest: { trees: 3000 }\n  tree: { depth: 1 }\n`,
    );
    const r = nightshift(["run", planPath, "--run-dir", "r", "--json"], dir);
    expect(r.code).toBe(0);
    const rows = JSON.parse(r.stdout).rows as Array<{ family: string; status: string; message: string }>;
    const forests = rows.filter((row) => row.family === "forest");
    expect(forests.length).toBeGreaterThan(0);
    for (const row of forests) {
      expect(row.status).toBe("timed_out");
      expect(row.message).toMatch(/trial_minutes/);
    }
  });
});
