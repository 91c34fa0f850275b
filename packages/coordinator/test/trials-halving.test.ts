import { parsePlan } from "@nightshift/core";
import { describe, expect, it } from "vitest";
import { defaultBatchSize, promote, rungFolds } from "../src/halving.js";
import { deriveTrial } from "../src/trials.js";

const plan = parsePlan(
  `name: t
seed: 42
data: { train: d.csv, target: y }
budget: { trials: 100 }
families:
  forest: { trees: { int: [50, 400], log: true }, depth: { choice: [null, 8, 16] }, weight: 3 }
  logistic: { l2: { log_uniform: [1e-4, 100] } }
`,
  "t.plan.yaml",
);

describe("trial derivation", () => {
  it("derives trial i from (seed, i) alone, in any order", () => {
    const forward = Array.from({ length: 20 }, (_, i) => deriveTrial(plan, i));
    const backward = Array.from({ length: 20 }, (_, i) => deriveTrial(plan, 19 - i)).reverse();
    expect(backward).toEqual(forward);
    expect(deriveTrial({ ...plan, seed: 43 }, 0)).not.toEqual(forward[0]);
  });

  it("draws families by their weights", () => {
    const forests = Array.from({ length: 2000 }, (_, i) => deriveTrial(plan, i)).filter((t) => t.family === "forest").length;
    expect(forests / 2000).toBeGreaterThan(0.7);
    expect(forests / 2000).toBeLessThan(0.8);
  });
});

describe("successive halving", () => {
  it("runs 1, eta, ... folds and ends at all folds", () => {
    expect(rungFolds(5, 3)).toEqual([1, 3, 5]);
    expect(rungFolds(10, 3)).toEqual([1, 3, 9, 10]);
    expect(rungFolds(3, 3)).toEqual([1, 3]);
    expect(defaultBatchSize(5, 3)).toBe(9);
  });

  it("keeps the best 1/eta by score, ties to the lower trial, failures never", () => {
    const entries = [
      { trial: 4, score: 0.5 },
      { trial: 1, score: 0.7 },
      { trial: 2, score: 0.7 },
      { trial: 3, score: null },
      { trial: 0, score: 0.1 },
      { trial: 5, score: 0.9 },
    ];
    expect([...promote(entries, 3, "max")].sort()).toEqual([1, 5]);
    expect([...promote(entries, 3, "min")].sort()).toEqual([0, 4]);
    expect([...promote([{ trial: 9, score: null }], 3, "max")]).toEqual([]);
  });

  it("decides the same whatever order the scores arrived in", () => {
    const entries = Array.from({ length: 27 }, (_, i) => ({ trial: i, score: Math.round(Math.sin(i) * 10) / 10 }));
    const shuffled = [...entries].sort((a, b) => Math.cos(a.trial * 7) - Math.cos(b.trial * 7));
    expect([...promote(shuffled, 3, "max")].sort()).toEqual([...promote(entries, 3, "max")].sort());
  });
});
