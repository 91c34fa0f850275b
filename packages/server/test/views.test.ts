import type { Board, BoardRow } from "@nightshift/aggregator";
import { describe, expect, it } from "vitest";
import { accessProblem, isLoopback, presentedToken, tokenMatches } from "../src/access.js";
import { boardPage } from "../src/board-page.js";
import { runProgress } from "../src/run-progress.js";
import { thinnedIndices, trialDiagnostics } from "../src/trial-diagnostics.js";

function row(trial: number, rank: number, family: string, mean: number | null, fit: number | null, status: BoardRow["status"] = "done"): BoardRow {
  return { rank, trial, family, params: {}, mean, std: mean === null ? null : 0.01, folds: [], fit_s: fit, predict_s: fit, status, tie_with_best: rank === 1, message: null };
}

const BOARD: Board = {
  run: "r",
  metric: "rmse",
  direction: "min",
  rows: [row(3, 1, "boosted", 1.5, 2), row(0, 2, "forest", 1.7, 0.5), row(1, 3, "boosted", 2.1, 1), row(2, 4, "forest", null, null, "failed")],
  ensembles: [],
  holdout: null,
};

describe("boardPage", () => {
  it("sorts the score best first by the metric's direction, failed trials last either way", () => {
    const best = boardPage(BOARD, { sort: "mean", limit: 10, offset: 0 });
    expect(best.order).toBe("asc");
    expect(best.rows.map((r) => r.trial)).toEqual([3, 0, 1, 2]);
    const worst = boardPage(BOARD, { sort: "mean", order: "desc", limit: 10, offset: 0 });
    expect(worst.rows.map((r) => r.trial)).toEqual([1, 0, 3, 2]);
  });

  it("filters one family and pages it, with the total after the filter", () => {
    const page = boardPage(BOARD, { family: "boosted", sort: "fit_s", order: "desc", limit: 1, offset: 1 });
    expect(page.rows.map((r) => r.trial)).toEqual([1]);
    expect(page).toMatchObject({ total: 2, families: ["boosted", "forest"], sort: "fit_s", order: "desc" });
  });

  it("sorts text columns and breaks ties by rank", () => {
    expect(boardPage(BOARD, { sort: "family", limit: 10, offset: 0 }).rows.map((r) => r.trial)).toEqual([3, 1, 0, 2]);
  });
});

describe("runProgress", () => {
  const now = Date.parse("2026-12-02T03:00:00Z");
  const trials = [
    { trial: 0, status: "done" as const },
    { trial: 1, status: "pruned" as const },
    { trial: 2, status: "done" as const },
    { trial: 3, status: "running" as const },
    { trial: 4, status: "queued" as const },
    { trial: 5, status: "queued" as const },
    { trial: 6, status: "queued" as const },
  ];
  const results = [
    ...[0, 1, 2].map((fold) => ({ trial: 0, fold, score: 0.5, error: null })),
    { trial: 1, score: 0.2, error: null },
    ...[0.6, 0.7, 0.8].map((score) => ({ trial: 2, score, error: null })),
    { trial: 3, score: 0.9, error: null },
  ];
  const activity = { lastStartAt: "2026-12-02T02:58:20Z", foldsSinceStart: 8 };

  it("estimates the folds to come from the trials finished so far when halving drops trials early", () => {
    const p = runProgress({ trials, results, foldCount: 3, halving: true, direction: "max", state: "running", activity, now });
    // Done and pruned trials took (3 + 1 + 3) / 3 folds each; four unfinished trials at that rate.
    expect(p.progress.folds_done).toBe(8);
    expect(p.progress.folds_planned).toBe(Math.round(7 + 4 * (7 / 3)));
    // 8 folds in the 100 s since the run started: 0.08 folds/s, 8 folds to go.
    expect(p.progress.running_s).toBe(100);
    expect(p.progress.folds_per_s).toBeCloseTo(0.08, 12);
    expect(p.progress.eta_s).toBeCloseTo(100, 9);
    expect(p.trials).toEqual({ total: 7, done: 2, pruned: 1, failed: 0, timed_out: 0, running: 1, queued: 3 });
    // Only finished trials compete for best: trial 3 has one high fold but is still running.
    expect(p.best).toEqual({ trial: 2, score: (0.6 + 0.7 + 0.8) / 3 });
  });

  it("counts every fold for unfinished trials without halving, and has no ETA once the run stopped", () => {
    const p = runProgress({ trials, results, foldCount: 3, halving: false, direction: "min", state: "interrupted", activity, now });
    expect(p.progress.folds_planned).toBe(7 + 4 * 3);
    expect(p.progress.eta_s).toBeNull();
    expect(p.progress.folds_per_s).toBeNull();
    expect(p.best).toEqual({ trial: 0, score: 0.5 });
  });
});

describe("trialDiagnostics", () => {
  const options = { threshold: 0.5, bins: 2, strategy: "uniform" as const, points: 100 };

  it("binary: the confusion matrix at the threshold and the rates of the positive class", () => {
    // Computed by hand: at 0.5 rows 2, 3, 5 are called positive; rows 3 and 5 are positive.
    const d = trialDiagnostics({ task: "binary", labels: ["no", "yes"], truth: Int32Array.from([0, 0, 0, 1, 0, 1]), predictions: Float32Array.from([0.1, 0.2, 0.6, 0.7, 0.3, 0.9]), folds: [0, 1] }, options);
    const c = d.classification;
    expect(c?.confusion.matrix).toEqual([
      [3, 1],
      [0, 2],
    ]);
    expect(c?.confusion.precision).toBeCloseTo(2 / 3, 12);
    expect(c?.confusion.recall).toBe(1);
    expect(c?.confusion.f1).toBeCloseTo(0.8, 12);
    expect(c?.confusion.accuracy).toBeCloseTo(5 / 6, 12);
    // Every positive scores above every negative.
    expect(c?.roc_auc).toBe(1);
    expect(c?.average_precision).toBe(1);
    // Two uniform bins: [0, 0.5] holds 0.1, 0.2, 0.3 (no positive), (0.5, 1] holds 0.6, 0.7, 0.9 (two positive).
    expect(c?.calibration.count).toEqual([3, 3]);
    expect(c?.calibration.fraction_positive).toEqual([0, 2 / 3]);
    expect(d.regression).toBeNull();
  });

  it("binary: scoring the other class one-vs-rest turns the probabilities around", () => {
    const d = trialDiagnostics({ task: "binary", labels: ["no", "yes"], truth: Int32Array.from([0, 1, 1]), predictions: Float32Array.from([0.2, 0.9, 0.4]), folds: [0] }, { ...options, positive: 0, threshold: 0.7 });
    // P(no) = 0.8, 0.1, 0.6: only row 0 reaches 0.7 and is called 'no'.
    expect(d.classification?.positive).toEqual({ index: 0, label: "no", rows: 1 });
    expect(d.classification?.confusion.matrix).toEqual([
      [1, 0],
      [0, 2],
    ]);
  });

  it("multiclass: most probable class for the matrix, one class against the rest for the curves", () => {
    const probabilities = [
      [0.7, 0.2, 0.1],
      [0.1, 0.8, 0.1],
      [0.2, 0.3, 0.5],
      [0.4, 0.4, 0.2],
      [0.1, 0.1, 0.8],
    ];
    const d = trialDiagnostics({ task: "multiclass", labels: ["a", "b", "c"], truth: Int32Array.from([0, 1, 2, 1, 1]), predictions: Float32Array.from(probabilities.flat()), folds: [0] }, { ...options, positive: 1 });
    const c = d.classification;
    // Row 3 ties a and b at 0.4: the lowest index wins (NumPy's argmax); row 4 goes to c.
    expect(c?.confusion.threshold).toBeNull();
    expect(c?.confusion.matrix).toEqual([
      [1, 0, 0],
      [1, 1, 1],
      [0, 0, 1],
    ]);
    expect(c?.positive).toEqual({ index: 1, label: "b", rows: 3 });
    expect(c?.confusion.precision).toBe(1);
    expect(c?.confusion.recall).toBeCloseTo(1 / 3, 12);
  });

  it("refuses a class the run does not have", () => {
    expect(() => trialDiagnostics({ task: "binary", labels: ["no", "yes"], truth: Int32Array.from([0, 1]), predictions: Float32Array.from([0.2, 0.9]), folds: [0] }, { ...options, positive: 2 })).toThrow(RangeError);
  });

  it("regression: actual against predicted with RMSE, MAE and R²", () => {
    const d = trialDiagnostics({ task: "regression", labels: [], truth: Float64Array.from([1, 2, 3, 4]), predictions: Float32Array.from([1, 2, 3, 5]), folds: [0, 1] }, options);
    // Computed by hand: one error of 1 over four rows; the targets' sum of squares about 2.5 is 5.
    expect(d.regression).toEqual({ actual: [1, 2, 3, 4], predicted: [1, 2, 3, 5], rmse: 0.5, mae: 0.25, r2: 0.8 });
    expect(d.classification).toBeNull();
  });

  it("thins curves for drawing, keeping both ends", () => {
    expect(Array.from(thinnedIndices(5, 10))).toEqual([0, 1, 2, 3, 4]);
    expect(Array.from(thinnedIndices(101, 5))).toEqual([0, 25, 50, 75, 100]);
  });
});

describe("access", () => {
  it("needs a token for anything but loopback, and a long one", () => {
    expect(accessProblem("127.0.0.1", undefined)).toBeNull();
    expect(accessProblem("::1", undefined)).toBeNull();
    expect(accessProblem("0.0.0.0", undefined)).toMatch(/--token/);
    expect(accessProblem("192.168.1.20", "a".repeat(16))).toBeNull();
    expect(accessProblem("127.0.0.1", "short")).toMatch(/at least 16/);
    expect(isLoopback("127.1.2.3")).toBe(true);
    expect(isLoopback("10.0.0.1")).toBe(false);
  });

  it("compares tokens of any length without throwing", () => {
    expect(tokenMatches("s3cret-token-0123", "s3cret-token-0123")).toBe(true);
    expect(tokenMatches("s3cret-token-0123", "s3cret-token-012")).toBe(false);
    expect(tokenMatches("s3cret-token-0123", "")).toBe(false);
    expect(tokenMatches("s3cret-token-0123", undefined)).toBe(false);
  });

  it("reads the token from the bearer header first, then the query, then the cookie", () => {
    expect(presentedToken({ authorization: "Bearer abc", cookie: "nightshift_token=def" }, { token: "ghi" })).toBe("abc");
    expect(presentedToken({ authorization: "Token abc" }, { token: "ghi" })).toBeUndefined();
    expect(presentedToken({ cookie: "a=1; nightshift_token=d%3Def" }, { token: "ghi" })).toBe("ghi");
    expect(presentedToken({ cookie: "a=1; nightshift_token=d%3Def" }, {})).toBe("d=ef");
    expect(presentedToken({}, {})).toBeUndefined();
  });
});
