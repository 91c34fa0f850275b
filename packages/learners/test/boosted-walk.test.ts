import { createRng, type FeatureColumn, type Rng } from "@nightshift/core";
import { describe, expect, it } from "vitest";
import { type BoostedParams, boostedLearner } from "../src/index.js";
import type { BoostedModel } from "../src/boosted/boosted.js";
import { addTreeScores } from "../src/boosted/predict.js";
import { categorical, classes, numeric, trainView, values } from "./boosted-data.js";

/**
 * The WebAssembly walk of predict.ts against its JavaScript walk: the same scores, bit for bit,
 * on fitted models with missing values, categorical splits, several outputs, trees of every
 * depth (single leaves included), row counts that are not whole groups or blocks, and models
 * that take turns in the one kernel.
 */
const params = (overrides: Partial<BoostedParams>): BoostedParams => boostedLearner.params.parse(overrides);

function columns(rng: Rng, n: number, withCategories: boolean): FeatureColumn[] {
  const out: FeatureColumn[] = [];
  for (let j = 0; j < 5; j++) {
    // Some exact repeats (few distinct values), some missing values, some infinities.
    out.push(
      numeric(
        `x${j}`,
        Array.from({ length: n }, () => {
          const u = rng.next();
          if (u < 0.08) return Number.NaN;
          if (u < 0.1) return u < 0.09 ? Infinity : -Infinity;
          return j === 4 ? Math.floor(rng.next() * 6) : rng.normal();
        }),
      ),
    );
  }
  if (withCategories) {
    const vocabulary = ["a", "b", "c", "d", "e", "f", "g"];
    out.push(categorical("site", Array.from({ length: n }, () => (rng.next() < 0.1 ? -1 : Math.floor(rng.next() * 7))), vocabulary));
  }
  return out;
}

function signal(cols: FeatureColumn[], i: number): number {
  let s = 0;
  for (const c of cols) {
    if (c.kind === "categorical") s += c.codes[i] >= 0 ? (c.codes[i] % 3) - 1 : 0.5;
    else if (Number.isFinite(c.values[i])) s += c.values[i];
  }
  return s;
}

function scores(model: BoostedModel, cols: FeatureColumn[], rows: Uint32Array, engine: "webassembly" | "javascript"): Float64Array {
  const raw = new Float64Array(rows.length * model.outputs);
  for (let i = 0; i < rows.length; i++) for (let k = 0; k < model.outputs; k++) raw[i * model.outputs + k] = model.init[k];
  addTreeScores(model.compiled, model.mapper, { columns: cols, rows }, model.outputs, raw, engine);
  return raw;
}

function expectSameBits(a: Float64Array, b: Float64Array): void {
  expect(a.length).toBe(b.length);
  const differing = [];
  for (let i = 0; i < a.length; i++) if (!Object.is(a[i], b[i])) differing.push(i);
  expect(differing).toEqual([]);
}

describe("boosted prediction: WebAssembly walk", () => {
  const cases: { name: string; task: "regression" | "binary" | "multiclass"; withCategories: boolean; p: Partial<BoostedParams> }[] = [
    { name: "regression, numeric, depth 6", task: "regression", withCategories: false, p: { rounds: 30, depth: 6, leaves: 64, min_leaf: 2 } },
    { name: "binary, numeric, unlimited depth", task: "binary", withCategories: false, p: { rounds: 25, leaves: 40, min_leaf: 1 } },
    { name: "binary, categorical", task: "binary", withCategories: true, p: { rounds: 25, leaves: 16, min_leaf: 3 } },
    { name: "multiclass, numeric", task: "multiclass", withCategories: false, p: { rounds: 12, depth: 4, leaves: 16, min_leaf: 2 } },
    { name: "multiclass, categorical", task: "multiclass", withCategories: true, p: { rounds: 12, leaves: 12, min_leaf: 2 } },
    // A huge minimum leaf size: every tree is a single leaf (depth 0).
    { name: "single-leaf trees", task: "regression", withCategories: true, p: { rounds: 5, min_leaf: 10_000 } },
  ];
  for (const [index, c] of cases.entries()) {
    it(`gives the JavaScript walk's scores bit for bit: ${c.name}`, () => {
      const rng = createRng("boosted-walk", index);
      const n = 1500;
      const train = columns(rng, n, c.withCategories);
      const s = Array.from({ length: n }, (_, i) => signal(train, i) + 0.5 * rng.normal());
      const target =
        c.task === "regression"
          ? values(s)
          : c.task === "binary"
            ? classes(s.map((v) => (v > 0 ? 1 : 0)))
            : classes(
                s.map((v) => (v < -1 ? 0 : v < 1 ? 1 : 2)),
                ["0", "1", "2"],
              );
      const model = boostedLearner.fit(trainView(train, target), params(c.p), createRng(index)) as BoostedModel;
      expect(model.compiled.hasCategorical).toBe(c.withCategories && c.name !== "single-leaf trees");
      // Fresh rows (unseen categories among them), scored in a shuffled order, 1,237 = two blocks and a ragged group.
      const test = columns(rng, 1237, c.withCategories);
      if (c.withCategories) {
        const site = test[test.length - 1];
        if (site.kind === "categorical") for (let i = 0; i < 40; i++) site.codes[i] = 9;
      }
      const rows = Uint32Array.from({ length: 1237 }, (_, i) => (i * 389) % 1237);
      const wasm = scores(model, test, rows, "webassembly");
      expectSameBits(wasm, scores(model, test, rows, "javascript"));
      // Consecutive rows (copied into the kernel a column at a time), from an offset.
      const range = Uint32Array.from({ length: 1000 }, (_, i) => 200 + i);
      expectSameBits(scores(model, test, range, "webassembly"), scores(model, test, range, "javascript"));
      for (const count of [0, 1, 7, 9, 17]) expectSameBits(scores(model, test, rows.subarray(0, count), "webassembly"), wasm.subarray(0, count * model.outputs));
    });
  }

  it("keeps each model's scores when models take turns in the kernel", () => {
    const rng = createRng("boosted-walk-turns");
    const n = 800;
    const cols = columns(rng, n, false);
    const y = Array.from({ length: n }, (_, i) => (signal(cols, i) > 0 ? 1 : 0));
    const small = boostedLearner.fit(trainView(cols, classes(y)), params({ rounds: 5, leaves: 4 }), createRng(1)) as BoostedModel;
    const large = boostedLearner.fit(trainView(cols, classes(y)), params({ rounds: 60, leaves: 63, min_leaf: 1 }), createRng(2)) as BoostedModel;
    const rows = Uint32Array.from({ length: n }, (_, i) => i);
    const expected = [small, large].map((m) => scores(m, cols, rows, "javascript"));
    for (const turn of [0, 1, 0, 1, 1, 0]) expectSameBits(scores([small, large][turn], cols, rows, "webassembly"), expected[turn]);
  });
});
