import { averagePrecision as corePrecision, createRng, metricByName, type Metric, rocAuc as coreAuc } from "@nightshift/core";
import { describe, expect, it } from "vitest";
import { combinePredictions, toFullWidth } from "../src/ensembles/combine-predictions.js";
import { greedySelection } from "../src/ensembles/greedy-selection.js";
import { createHillclimbScorer, type HillclimbScorer, valueRange } from "../src/ensembles/hillclimb-scorer.js";

const accuracy = metricByName("accuracy");
const averagePrecision = metricByName("average_precision");
const rocAuc = metricByName("roc_auc");
const logLoss = metricByName("log_loss");

/**
 * The three-voter case (METHODS.md §12, common practice): rows in three blocks, every voter
 * right with P = 0.9 on two blocks and confidently wrong (0.05 on the true class) on its own
 * block. Each voter is right on 2/3 of the rows; the mean of the three is right everywhere
 * (0.9 + 0.9 + 0.05 over 3 = 0.617 on the true class), while any two average to 0.475 on one block.
 */
function threeVoters(rowsPerBlock = 10): { y: Int32Array; voters: Float32Array[] } {
  const n = 3 * rowsPerBlock;
  const y = Int32Array.from({ length: n }, (_, i) => (i % 2 === 0 ? 1 : 0));
  const voters = [0, 1, 2].map((voter) =>
    Float32Array.from({ length: n }, (_, i) => {
      const right = Math.floor(i / rowsPerBlock) !== voter;
      const onTrueClass = right ? 0.9 : 0.05;
      return y[i] === 1 ? onTrueClass : 1 - onTrueClass;
    }),
  );
  return { y, voters };
}

function scoreOf(metric: Metric, y: Int32Array, stored: Float64Array): number {
  return metric.score(y, toFullWidth("binary", stored), 2);
}

function weightedAverage(weights: Float64Array, members: Float32Array[], rows: number): Float64Array {
  const used = Array.from(weights.keys()).filter((m) => weights[m] > 0);
  return combinePredictions({ kind: "selection", members: used.map((m) => ({ trial: m, weight: weights[m] })) }, "binary", 1, used.map((m) => members[m]), rows);
}

/** Candidates with signal, shared noise, own noise, and a third of them rounded (ties, like forests' vote shares). */
function library(n: number, candidates: number, seed: string): { y: Int32Array; predictions: Float32Array[] } {
  const rng = createRng("greedy-test", seed);
  const y = new Int32Array(n);
  const signal = new Float64Array(n);
  const shared = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    y[i] = rng.next() < 0.15 ? 1 : 0;
    signal[i] = rng.normal() + 1.2 * y[i];
    shared[i] = rng.normal();
  }
  const predictions = Array.from({ length: candidates }, (_, m) => {
    const a = 0.3 + rng.next();
    const b = rng.next();
    const c = 0.5 + rng.next();
    return Float32Array.from({ length: n }, (_, i) => {
      const p = 1 / (1 + Math.exp(-(a * signal[i] + b * shared[i] + c * rng.normal() - 2)));
      return m % 3 === 0 ? Math.round(p * 20) / 20 : p;
    });
  });
  return { y, predictions };
}

/** The same scorer with its bounds hidden: selection then scores every candidate exactly. */
function exhaustive(scorer: HillclimbScorer): HillclimbScorer {
  return { metric: scorer.metric, bounded: false, sum: scorer.sum, score: (add, divisor) => scorer.score(add, divisor), bounds: () => undefined };
}

describe("greedy ensemble selection with replacement (Caruana et al. 2004)", () => {
  it("three voters wrong on different rows: the ensemble is right on every row, each voter on 2/3", () => {
    const { y, voters } = threeVoters();
    for (const v of voters) expect(scoreOf(accuracy, y, Float64Array.from(v))).toBeCloseTo(2 / 3, 12);
    // Accuracy is flat under small changes, so greedy steps from an empty start cannot see the gain of a
    // third voter; sorted initialisation with the three best starts from their vote.
    const started = greedySelection(voters, y, "binary", 1, accuracy, { rounds: 5, init: 3 });
    expect(started.curve[0]).toBe(1);
    expect(Array.from(started.weights)).toEqual([1 / 3, 1 / 3, 1 / 3]);
    // A smooth metric finds the combination from an empty start.
    const smooth = greedySelection(voters, y, "binary", 1, logLoss, { rounds: 12, init: 0 });
    const combined = weightedAverage(smooth.weights, voters, y.length);
    expect(scoreOf(accuracy, y, combined)).toBe(1);
    for (const v of voters) expect(scoreOf(logLoss, y, combined)).toBeLessThan(scoreOf(logLoss, y, Float64Array.from(v)));
  });

  it("identical members change nothing: a copy is never picked and the ensemble's predictions stay the same", () => {
    const { y, predictions } = library(400, 4, "copies");
    const alone = greedySelection(predictions, y, "binary", 1, averagePrecision, { rounds: 15, init: 0 });
    const withCopies = greedySelection([...predictions, Float32Array.from(predictions[0]), Float32Array.from(predictions[2])], y, "binary", 1, averagePrecision, { rounds: 15, init: 0 });
    expect(Array.from(withCopies.curve)).toEqual(Array.from(alone.curve));
    expect(Array.from(withCopies.weights.slice(4))).toEqual([0, 0]);
    expect(Array.from(withCopies.weights.slice(0, 4))).toEqual(Array.from(alone.weights));
    // Two identical members: every round scores exactly what the member scores alone.
    const twins = greedySelection([predictions[1], Float32Array.from(predictions[1])], y, "binary", 1, averagePrecision, { rounds: 6, init: 0 });
    const single = scoreOf(averagePrecision, y, Float64Array.from(predictions[1]));
    expect(Array.from(twins.curve)).toEqual(new Array(6).fill(single));
    expect(twins.size).toBe(1);
  });

  it("keeps the best prefix: weights sum to 1 and the kept ensemble scores the curve's best point", () => {
    const { y, predictions } = library(600, 12, "prefix");
    for (const metric of [averagePrecision, rocAuc, logLoss, metricByName("brier"), accuracy]) {
      for (const init of [0, 3]) {
        const s = greedySelection(predictions, y, "binary", 1, metric, { rounds: 20, init });
        const total = s.weights.reduce((a, b) => a + b, 0);
        expect(Math.abs(total - 1)).toBeLessThan(1e-12);
        expect(s.counts.reduce((a, b) => a + b, 0)).toBe(s.size);
        const kept = scoreOf(metric, y, weightedAverage(s.weights, predictions, y.length));
        expect(Math.abs(kept - s.curve[s.best])).toBeLessThan(1e-12);
        // The best-so-far curve is non-decreasing by construction and ends at the kept score; nothing after the kept point is better.
        let bestSoFar = s.curve[0];
        for (let k = 1; k < s.curve.length; k++) {
          const next = metric.direction === "max" ? Math.max(bestSoFar, s.curve[k]) : Math.min(bestSoFar, s.curve[k]);
          expect(metric.direction === "max" ? next >= bestSoFar : next <= bestSoFar).toBe(true);
          bestSoFar = next;
        }
        expect(bestSoFar).toBe(s.curve[s.best]);
        if (init === 0) {
          // Re-picking the first member reproduces it, so the second round is never worse than the first.
          expect(metric.direction === "max" ? s.curve[1] >= s.curve[0] : s.curve[1] <= s.curve[0]).toBe(true);
        }
      }
    }
  });

  it("beats the best single candidate on a library of diverse models", () => {
    const { y, predictions } = library(2000, 10, "diverse");
    const singles = predictions.map((p) => scoreOf(averagePrecision, y, Float64Array.from(p)));
    const s = greedySelection(predictions, y, "binary", 1, averagePrecision, { rounds: 25, init: 0 });
    expect(s.curve[s.best]).toBeGreaterThan(Math.max(...singles));
    expect(s.counts.filter((c) => c > 0).length).toBeGreaterThan(1);
  });

  it("with bounds, picks exactly what scoring every candidate picks, and scores far fewer exactly", () => {
    for (const [metric, seed] of [
      [averagePrecision, "ap"],
      [rocAuc, "auc"],
    ] as const) {
      const { y, predictions } = library(3000, 30, seed);
      const scorer = createHillclimbScorer(metric, "binary", y, 1);
      const pruned = greedySelection(predictions, y, "binary", 1, metric, { rounds: 12, init: 0 }, scorer);
      const full = greedySelection(predictions, y, "binary", 1, metric, { rounds: 12, init: 0 }, exhaustive(scorer));
      expect(Array.from(pruned.picks)).toEqual(Array.from(full.picks));
      expect(Array.from(pruned.curve)).toEqual(Array.from(full.curve));
      expect(pruned.evaluations).toBeLessThan(full.evaluations / 2);
    }
  });

  it("is the same on multiclass and regression through the registry's metrics", () => {
    const rng = createRng("greedy-test", "multiclass");
    const n = 300;
    const y = Int32Array.from({ length: n }, () => rng.int(3));
    const predictions = Array.from({ length: 5 }, () =>
      Float32Array.from({ length: n * 3 }, (_, k) => {
        const i = Math.floor(k / 3);
        return (k % 3 === y[i] ? 0.4 : 0.3) + 0.1 * (rng.next() - 0.5);
      }),
    );
    const s = greedySelection(predictions, y, "multiclass", 3, logLoss, { rounds: 8, init: 0 });
    const used = Array.from(s.weights.keys()).filter((m) => s.weights[m] > 0);
    const combined = combinePredictions({ kind: "selection", members: used.map((m) => ({ trial: m, weight: s.weights[m] })) }, "multiclass", 3, used.map((m) => predictions[m]), n);
    expect(Math.abs(logLoss.score(y, combined, 3) - s.curve[s.best])).toBeLessThan(1e-12);

    const values = Float64Array.from({ length: n }, () => rng.normal());
    const regressors = Array.from({ length: 4 }, () => Float32Array.from(values, (v) => v + rng.normal()));
    const r = greedySelection(regressors, values, "regression", 1, metricByName("rmse"), { rounds: 10, init: 0 });
    // Independent errors of equal spread: the best ensemble spreads its weight.
    expect(r.counts.filter((c) => c > 0).length).toBeGreaterThan(2);
  });
});

describe("hillclimb scorers", () => {
  it("equal the registry metric on the averaged predictions, and their bounds hold the exact score", () => {
    const { y, predictions } = library(5000, 4, "scorers");
    const sum = new Float64Array(y.length);
    for (let m = 0; m < 3; m++) for (let i = 0; i < sum.length; i++) sum[i] += predictions[m][i];
    const average = Float64Array.from(sum, (v, i) => (v + predictions[3][i]) / 4);
    const bounds = new Float64Array(2);
    for (const metric of [averagePrecision, rocAuc, logLoss]) {
      const scorer = createHillclimbScorer(metric, "binary", y, 1);
      scorer.sum.set(sum);
      const exact = scorer.score(predictions[3], 4);
      const registry = scoreOf(metric, y, average);
      expect(Math.abs(exact - registry)).toBeLessThan(1e-12);
      if (scorer.bounded) {
        scorer.bounds(valueRange(sum), predictions[3], valueRange(predictions[3]), bounds);
        expect(bounds[0]).toBeLessThanOrEqual(exact);
        expect(bounds[1]).toBeGreaterThanOrEqual(exact);
        // The optimistic side (both are maximised) is what prunes: it must be close.
        expect(bounds[1] - exact).toBeLessThan(0.02);
      }
    }
  });

  it("AP and ROC AUC through the bins are core's values bit for bit, whatever the spread of the scores", () => {
    const rng = createRng("greedy-test", "bitwise");
    const n = 4000;
    const cases: Array<[string, (i: number) => number, number]> = [
      ["smooth", () => rng.next(), 0.2],
      ["ties", () => Math.round(rng.next() * 10) / 10, 0.3],
      ["one outlier stretches the range (most rows share a bin)", (i) => (i === 7 ? 1e6 : rng.next()), 0.1],
      ["constant", () => 0.5, 0.4],
      ["tiny probabilities", () => rng.next() * 1e-7, 0.05],
      ["no positive", () => rng.next(), 0],
      ["only positives", () => rng.next(), 1],
    ];
    for (const [name, draw, rate] of cases) {
      const y = Int32Array.from({ length: n }, () => (rng.next() < rate ? 1 : 0));
      const positive = Uint8Array.from(y);
      const sum = Float64Array.from({ length: n }, (_, i) => draw(i));
      const add = Float32Array.from({ length: n }, () => Math.round(rng.next() * 4) / 4);
      const values = Float64Array.from(sum, (v, i) => v + add[i]);
      const apScorer = createHillclimbScorer(averagePrecision, "binary", y, 1);
      apScorer.sum.set(sum);
      const aucScorer = createHillclimbScorer(rocAuc, "binary", y, 1);
      aucScorer.sum.set(sum);
      const ap = apScorer.score(add, 2);
      const auc = aucScorer.score(add, 2);
      expect(ap, name).toBe(corePrecision(positive, values));
      expect(Object.is(auc, coreAuc(positive, values)), name).toBe(true);
    }
  });

  it("bounds hold with heavy ties and a constant score (AP = positive rate, AUC = 0.5; METHODS.md §12)", () => {
    const rng = createRng("greedy-test", "ties");
    const n = 1000;
    const y = Int32Array.from({ length: n }, () => (rng.next() < 0.3 ? 1 : 0));
    const positives = y.reduce((a, b) => a + b, 0);
    const tied = Float32Array.from({ length: n }, (_, i) => Math.round((0.3 * y[i] + rng.next()) * 4) / 4);
    const constant = new Float32Array(n).fill(0.25);
    const zero = new Float64Array(n);
    const bounds = new Float64Array(2);
    for (const metric of [averagePrecision, rocAuc]) {
      const scorer = createHillclimbScorer(metric, "binary", y, 1);
      for (const p of [tied, constant]) {
        const exact = scorer.score(p, 1);
        scorer.bounds(valueRange(zero), p, valueRange(p), bounds);
        expect(bounds[0]).toBeLessThanOrEqual(exact);
        expect(bounds[1]).toBeGreaterThanOrEqual(exact);
      }
      expect(scorer.score(constant, 1)).toBeCloseTo(metric === averagePrecision ? positives / n : 0.5, 12);
    }
  });
});
