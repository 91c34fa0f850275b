import { existsSync, readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { nightshift, SMALL_FAMILIES, tempDir, writePlan, writeSmallTurbines } from "./helpers.js";

describe("nightshift command line", () => {
  it("lists its verbs", () => {
    const r = nightshift(["--help"], process.cwd());
    expect(r.code).toBe(0);
    for (const verb of ["demo", "init", "run", "board"]) expect(r.stdout).toContain(verb);
  });

  it("demo makes the turbine data and plan, runs a short search and prints the board", () => {
    const dir = tempDir("demo");
    const r = nightshift(["demo", "--trials", "4"], dir);
    expect(r.stderr).toContain("wrote data/turbines.csv");
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/average_precision/);
    expect(r.stdout.split("\n").filter((l) => /\b(done|pruned|failed)\b/.test(l)).length).toBe(4);
    expect(existsSync(join(dir, "data", "turbines.csv"))).toBe(true);
  });

  it("init infers a rare-event plan that run and board accept", () => {
    const dir = tempDir("init");
    writeSmallTurbines(dir);
    const init = nightshift(["init", "turbines.csv", "--target", "failed_within_30d", "--out", "t.plan.yaml"], dir);
    expect(init.code).toBe(0);
    const planText = readFileSync(join(dir, "t.plan.yaml"), "utf8");
    expect(planText).toMatch(/^task: binary/m);
    expect(planText).toMatch(/^metric: average_precision/m);
    expect(planText).toMatch(/^  ignore: \[\]/m);
    // A short budget and cheap families keep the test fast; the inferred header is kept.
    const short = planText.replace(/^budget:.*$/m, "budget: { trials: 3 }").replace(/^halving:.*$/m, "").replace(/^families:[\s\S]*?^ensemble/m, `${SMALL_FAMILIES}ensemble`);
    writeFileSync(join(dir, "t.plan.yaml"), short);
    const run = nightshift(["run", "t.plan.yaml", "--run-dir", "r", "--quiet"], dir);
    expect(run.stderr).toBe("");
    expect(run.code).toBe(0);
    const board = nightshift(["board", "r", "--json", "--top", "2"], dir);
    expect(board.code).toBe(0);
    const json = JSON.parse(board.stdout);
    expect(json.metric).toBe("average_precision");
    expect(json.direction).toBe("max");
    expect(json.rows).toHaveLength(2);
    expect(Object.keys(json.rows[0]).sort()).toEqual(
      ["rank", "trial", "family", "params", "mean", "std", "folds", "fit_s", "predict_s", "status", "tie_with_best", "message"].sort(),
    );
    expect(json.rows[0].tie_with_best).toBe(true);
    const text = nightshift(["board", "r"], dir);
    expect(text.stdout).toMatch(/rank\s+trial\s+family/);
  });

  it("reports a plan whose families all fail as such, not as a crash", () => {
    const dir = tempDir("allfail");
    // Every feature is constant: no family can find anything to fit on.
    const rows = ["a,b,y", ...Array.from({ length: 60 }, (_, i) => `1,x,${i % 3 === 0 ? "yes" : "no"}`)];
    writeFileSync(join(dir, "flat.csv"), rows.join("\n"));
    const planPath = writePlan(dir, `name: flat\ndata: { train: flat.csv, target: y, holdout: 0 }\nfolds: { k: 3 }\nbudget: { trials: 3 }\n${SMALL_FAMILIES}`);
    const r = nightshift(["run", planPath, "--run-dir", "r", "--json"], dir);
    expect(r.code).toBe(0);
    expect(r.stderr).toMatch(/every trial failed/);
    const board = JSON.parse(r.stdout);
    expect(board.rows.every((row: { status: string; message: string }) => row.status === "failed" && row.message.length > 0)).toBe(true);
  });

  it.each([
    [["run", "missing.plan.yaml"], /missing\.plan\.yaml: cannot read plan/],
    [["run"], /expected one plan file/],
    [["board", "nowhere"], /nowhere: not a run folder/],
    [["run", "x.yaml", "--workers", "zero"], /--workers: must be a positive integer/],
    [["frobnicate"], /unknown verb 'frobnicate'/],
  ])("gives one clear message and exit code 2 for %j", (args, message) => {
    const r = nightshift(args as string[], tempDir("bad"));
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(message);
    expect(r.stderr.trim().split("\n")).toHaveLength(1);
  });

  it("refuses to resume a run folder with a changed plan, leaving the store untouched", () => {
    const dir = tempDir("changed");
    writeSmallTurbines(dir);
    const body = `name: changed\ndata: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id] }\nfolds: { k: 3 }\nbudget: { trials: 2 }\n${SMALL_FAMILIES}`;
    const planPath = writePlan(dir, body);
    expect(nightshift(["run", planPath, "--run-dir", "r", "--quiet"], dir).code).toBe(0);
    const before = readFileSync(join(dir, "r", "run.sqlite"));
    writeFileSync(planPath, body.replace("name: changed", "name: changed\nseed: 9"));
    const r = nightshift(["run", planPath, "--run-dir", "r"], dir);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/different plan/);
    expect(readFileSync(join(dir, "r", "run.sqlite"))).toEqual(before);
  });
});
