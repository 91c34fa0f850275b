import { describe, expect, it } from "vitest";
import { createRng } from "../src/random.js";
import { averagePrecision, createMetricScratch, rocAuc } from "../src/metrics/index.js";
import { sortFloat64Ascending, SORT_COUNTS_LENGTH } from "../src/metrics/float-sort.js";

/*
 * Above 32,768 rows the ranking metrics switch from the engine's sort to a radix sort on the
 * float bits. These checks hold the fast path to a plain implementation: sort row indices by
 * score with a comparator, then walk distinct scores.
 */
function plainRanking(positive: Uint8Array, scores: Float64Array): { ap: number; auc: number } {
  const order = Array.from(scores, (_, i) => i).sort((a, b) => scores[b] - scores[a]);
  const positives = positive.reduce((sum, v) => sum + v, 0);
  const negatives = positive.length - positives;
  let tp = 0;
  let fp = 0;
  let ap = 0;
  let auc = 0;
  for (let k = 0; k < order.length; ) {
    const threshold = scores[order[k]];
    const tpBefore = tp;
    const fpBefore = fp;
    while (k < order.length && scores[order[k]] === threshold) {
      if (positive[order[k]]) tp++;
      else fp++;
      k++;
    }
    ap += ((tp - tpBefore) / positives) * (tp / (tp + fp));
    auc += ((fp - fpBefore) * (tp + tpBefore)) / 2;
  }
  return { ap, auc: auc / (positives * negatives) };
}

function randomCase(n: number, decimals: number, seed: number): { positive: Uint8Array; scores: Float64Array } {
  const rng = createRng("metrics-large", seed);
  const positive = new Uint8Array(n);
  const scores = new Float64Array(n);
  const scale = 10 ** decimals;
  for (let i = 0; i < n; i++) {
    positive[i] = rng.next() < 0.3 ? 1 : 0;
    const raw = rng.normal() + positive[i];
    scores[i] = decimals < 0 ? raw : Math.round(raw * scale) / scale;
  }
  return { positive, scores };
}

describe("ranking metrics on the radix-sort path", () => {
  it("sorts floats of both signs, zeros and ties like the engine's sort", () => {
    const rng = createRng("float-sort");
    const n = 70_000;
    const values = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const draw = rng.next();
      values[i] = draw < 0.1 ? 0 : draw < 0.15 ? -0 : draw < 0.5 ? Math.round(rng.normal() * 10) / 10 : rng.normal() * 1e6;
    }
    const expected = values.slice().sort();
    sortFloat64Ascending(values, new Float64Array(n), new Uint32Array(SORT_COUNTS_LENGTH));
    expect(values).toEqual(expected);
  });

  it("agrees with a plain comparator-sort implementation on 50,000 rows with and without ties", () => {
    const scratch = createMetricScratch();
    for (const decimals of [1, 2, -1]) {
      const { positive, scores } = randomCase(50_000, decimals, decimals);
      const plain = plainRanking(positive, scores);
      expect(averagePrecision(positive, scores, scratch)).toBeCloseTo(plain.ap, 12);
      expect(rocAuc(positive, scores, scratch)).toBeCloseTo(plain.auc, 12);
      expect(rocAuc(positive, Float32Array.from(scores))).toBeCloseTo(rocAuc(positive, Float64Array.from(Float32Array.from(scores))), 15);
    }
  });
});
