import { describe, expect, it } from "vitest";
import { createRng } from "../src/random.js";
import { parseDistribution, sample } from "../src/plan/distributions.js";
import { parsePlan } from "../src/plan/read-plan.js";

const base = `name: turbine-gearbox
seed: 42
data: { train: data/turbines.csv, target: failed_within_30d, ignore: [turbine_id], holdout: 0.2 }
task: binary
metric: average_precision
folds: { k: 5, repeats: 1, stratify: true }
budget: { trials: 300, hours: 8, trial_minutes: 20 }
halving: { eta: 3 }
families:
  forest:  { trees: { int: [50, 400], log: true }, depth: { choice: [null, 8, 16] }, split_features: { uniform: [0.1, 1.0] } }
  boosted: { learning_rate: { log_uniform: [0.01, 0.3] }, leaves: { int: [8, 128], log: true }, rounds: 500 }
  logistic: { l2: { log_uniform: [1e-4, 100] }, class_weight: { choice: [none, balanced] } }
ensemble: { selection: { rounds: 50, candidates: 50 }, stacking: { top: 20 } }
`;

function errorOf(text: string): string {
  try {
    parsePlan(text, "p.plan.yaml");
  } catch (error) {
    return (error as Error).message;
  }
  return "no error";
}

describe("plan files", () => {
  it("accepts the plan of DESIGN.md and fills defaults", () => {
    const plan = parsePlan(base, "p.plan.yaml");
    expect(plan.budget.trials).toBe(300);
    expect(plan.families.forest?.params.depth).toEqual({ kind: "choice", options: [null, 8, 16] });
    expect(plan.families.boosted?.params.rounds).toEqual({ kind: "constant", value: 500 });
    expect(plan.ensemble.voting.top).toBe(10);
  });

  it("names the file, line, column and key path of an unknown key", () => {
    expect(errorOf(base.replace("holdout: 0.2", "holdout: 0.2, hold: 1"))).toBe("p.plan.yaml:3:98: data.hold: unknown key 'hold'");
  });

  it("rejects unknown families, impossible ranges and wrong types with the key path", () => {
    expect(errorOf(base.replace("forest:", "jungle:"))).toMatch(/^p\.plan\.yaml:10:3: families\.jungle: unknown family/);
    expect(errorOf(base.replace("[0.01, 0.3]", "[0.3, 0.01]"))).toMatch(/families\.boosted\.learning_rate: log_uniform needs low <= high/);
    expect(errorOf(base.replace("[1e-4, 100]", "[0, 100]"))).toMatch(/families\.logistic\.l2: log_uniform needs low > 0/);
    expect(errorOf(base.replace("trials: 300", "trials: many"))).toMatch(/:7:\d+: budget\.trials: /);
    expect(errorOf(base.replace("k: 5", "k: 1"))).toMatch(/folds\.k: /);
  });

  it("reports YAML syntax errors with line and column", () => {
    expect(errorOf("name: x\n  bad: [\n")).toMatch(/^p\.plan\.yaml:\d+:\d+: not valid YAML/);
  });

  it("refuses keys a JavaScript object would mishandle, and alias bombs, with one InputError", () => {
    expect(errorOf(base.replace("rounds: 500", "rounds: 500, __proto__: { int: [1, 2] }"))).toMatch(/^p\.plan\.yaml:11:\d+: '__proto__' cannot be a key/);
    expect(errorOf(base.replace("rounds: 500", "rounds: 500, ? [a, b] : 2"))).toMatch(/^p\.plan\.yaml:11:\d+: a key must be a plain name/);
    expect(errorOf(base.replace("rounds: 500", "rounds: 500, ~: 2"))).toMatch(/^p\.plan\.yaml:11:\d+: a key must not be empty/);
    const levels = ["a0: &a0 [x, x, x, x, x, x, x, x, x]"];
    for (let d = 1; d < 6; d++) levels.push(`a${d}: &a${d} [${Array(9).fill(`*a${d - 1}`).join(", ")}]`);
    expect(errorOf(`${levels.join("\n")}\n${base}`)).toMatch(/^p\.plan\.yaml: not a usable plan: /);
  });

  it("refuses ranges a double cannot sample", () => {
    expect(errorOf(base.replace("[50, 400]", "[50, 1e300]"))).toMatch(/families\.forest\.trees: int bounds must lie within/);
    expect(errorOf(base.replace("[0.1, 1.0]", "[-1e308, 1e308]"))).toMatch(/families\.forest\.split_features: uniform range .* is wider than a double/);
  });
});

describe("distributions", () => {
  it("samples within bounds, integers as integers, log scales spread over decades", () => {
    const rng = createRng(3);
    const logInt = parseDistribution({ int: [1, 1000], log: true });
    const logUniform = parseDistribution({ log_uniform: [1e-4, 1] });
    if (typeof logInt === "string" || typeof logUniform === "string") throw new Error(String(logInt));
    let belowTen = 0;
    let belowCentile = 0;
    for (let i = 0; i < 2000; i++) {
      const v = sample(logInt, rng) as number;
      expect(Number.isInteger(v) && v >= 1 && v <= 1000).toBe(true);
      if (v < 10) belowTen++;
      const u = sample(logUniform, rng) as number;
      expect(u >= 1e-4 && u <= 1).toBe(true);
      if (u < 1e-2) belowCentile++;
    }
    // Log-uniform: a third of the mass per decade of three (int: [1, 1001) so slightly less).
    expect(belowTen / 2000).toBeGreaterThan(0.28);
    expect(belowCentile / 2000).toBeGreaterThan(0.45);
  });
});
