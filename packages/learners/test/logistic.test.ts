import { allRows, type TrainView } from "@nightshift/core";
import { describe, expect, it } from "vitest";
import { FitError } from "../src/learner.js";
import { ParamError } from "../src/params.js";
import { designMatrix, logisticLearner, parseFamilyParams, type LinearModel } from "../src/linear/index.js";
import { averagePrecision, classView, column, gaussianClasses, numeric, valueView } from "./linear-knn-fixtures.js";

const defaults = logisticLearner.params.parse({});
const rng = { next: () => 0, int: () => 0, normal: () => 0 };
const fit = (view: TrainView, params: Partial<typeof defaults> = {}) => logisticLearner.fit(view, { ...defaults, ...params }, rng);

/** The objective as documented, written out independently: (1/n)[Σ s_i ℓ_i + (l2/2)·‖W‖²]. */
function objective(model: LinearModel, view: TrainView, theta: Float64Array, rowWeight: (c: number) => number): number {
  const x = designMatrix(model.encoding, view);
  const p = model.encoding.width;
  const k = model.intercepts.length;
  const n = view.rows.length;
  const codes = view.target.kind === "classes" ? view.target.codes : new Int32Array(0);
  let loss = 0;
  for (let i = 0; i < n; i++) {
    const z = Array.from({ length: k }, (_, c) => {
      let s = theta[k * p + c];
      for (let j = 0; j < p; j++) s += theta[c * p + j] * x[i * p + j];
      return s;
    });
    const y = codes[view.rows[i]];
    const yIndex = model.classes.indexOf(y);
    if (k === 1) loss += rowWeight(y) * (Math.log1p(Math.exp(z[0])) - (yIndex === 1 ? z[0] : 0));
    else {
      const top = Math.max(...z);
      loss += rowWeight(y) * (top + Math.log(z.reduce((a, v) => a + Math.exp(v - top), 0)) - z[yIndex]);
    }
  }
  let penalty = 0;
  for (let j = 0; j < k * p; j++) penalty += theta[j] * theta[j];
  return (loss + (model.params.l2 / 2) * penalty) / n;
}

function numericalGradient(f: (theta: Float64Array) => number, theta: Float64Array, h = 1e-6): Float64Array {
  const g = new Float64Array(theta.length);
  for (let j = 0; j < theta.length; j++) {
    const plus = Float64Array.from(theta);
    const minus = Float64Array.from(theta);
    plus[j] += h;
    minus[j] -= h;
    g[j] = (f(plus) - f(minus)) / (2 * h);
  }
  return g;
}

const parameters = (model: LinearModel) => Float64Array.from([...model.weights, ...model.intercepts]);
const maxAbs = (a: Float64Array) => a.reduce((m, v) => Math.max(m, Math.abs(v)), 0);

describe("logistic family: classification", () => {
  it("ranks a linearly separable set perfectly (average precision 1)", () => {
    const { columns, codes } = gaussianClasses([[-3, -3, 0], [3, 3, 0]], [60, 40], 1, "separable");
    const view = classView(columns, ["no", "yes"], codes);
    const model = fit(view);
    const p = logisticLearner.predict(model, view);
    expect(averagePrecision(Array.from(codes, (c) => c === 1), column(p, 2, 1))).toBeCloseTo(1, 12);
  });

  it("stops at a minimum of the documented objective: its numerical gradient vanishes there", () => {
    const { columns, codes } = gaussianClasses([[0, 0], [1, 0.5]], [70, 50], 1.2, "overlap");
    const view = classView(columns, ["a", "b"], codes);
    const model = fit(view, { l2: 2, tolerance: 1e-10 });
    const f = (theta: Float64Array) => objective(model, view, theta, () => 1);
    const theta = parameters(model);
    expect(maxAbs(numericalGradient(f, theta))).toBeLessThan(1e-7);
    // The same check away from the solution finds a clear slope, so it can fail.
    theta[0] += 0.5;
    expect(maxAbs(numericalGradient(f, theta))).toBeGreaterThan(1e-3);
  });

  it("softmax: stops at a minimum of the documented multinomial objective, with class weights", () => {
    const { columns, codes } = gaussianClasses([[0, 0], [1.5, 0], [0, 1.5]], [50, 30, 15], 1, "three");
    const view = classView(columns, ["a", "b", "c"], codes);
    const model = fit(view, { l2: 0.5, class_weight: "balanced", tolerance: 1e-10 });
    expect(model.kind).toBe("softmax");
    const counts = [50, 30, 15];
    const f = (theta: Float64Array) => objective(model, view, theta, (c) => 95 / (3 * counts[c]));
    expect(maxAbs(numericalGradient(f, parameters(model)))).toBeLessThan(1e-7);
  });

  it("gives multiclass probabilities that sum to 1 and favour the right class", () => {
    const { columns, codes } = gaussianClasses([[0, 0], [4, 0], [0, 4]], [40, 40, 40], 1, "clusters");
    const view = classView(columns, ["a", "b", "c"], codes);
    const p = logisticLearner.predict(fit(view), view);
    let correct = 0;
    for (let i = 0; i < codes.length; i++) {
      const row = [p[3 * i], p[3 * i + 1], p[3 * i + 2]];
      expect(row[0] + row[1] + row[2]).toBeCloseTo(1, 12);
      if (row.indexOf(Math.max(...row)) === codes[i]) correct++;
    }
    expect(correct / codes.length).toBeGreaterThan(0.9);
  });

  it("class_weight balanced raises the probabilities of the rare class", () => {
    const { columns, codes } = gaussianClasses([[0, 0], [1, 1]], [190, 10], 1, "rare");
    const view = classView(columns, ["common", "rare"], codes);
    const plain = column(logisticLearner.predict(fit(view), view), 2, 1);
    const balanced = column(logisticLearner.predict(fit(view, { class_weight: "balanced", tolerance: 1e-10 }), view), 2, 1);
    for (let i = 0; i < codes.length; i++) expect(balanced[i]).toBeGreaterThan(plain[i]);
    // At the optimum the unpenalised intercept makes the weighted mean probability equal the
    // weighted share of the rare class: with weights n/(2·n_c) each class carries half, so 0.5.
    const weightOf = (c: number) => 200 / (2 * (c === 1 ? 10 : 190));
    let weighted = 0;
    for (let i = 0; i < codes.length; i++) weighted += weightOf(codes[i]) * balanced[i];
    expect(weighted / 200).toBeCloseTo(0.5, 6);
    expect(plain.reduce((a, b) => a + b, 0) / 200).toBeCloseTo(0.05, 6);
  });

  it("gives probability 0 to a class absent from the training rows and still one column per label", () => {
    const { columns, codes } = gaussianClasses([[0, 0], [3, 3]], [20, 20], 1, "absent");
    const remapped = Int32Array.from(codes, (c) => (c === 0 ? 0 : 2));
    const model = fit(classView(columns, ["a", "b", "c"], remapped));
    const p = logisticLearner.predict(model, { columns, rows: allRows(40) });
    expect(p.length).toBe(120);
    for (let i = 0; i < 40; i++) {
      expect(p[3 * i + 1]).toBe(0);
      expect(p[3 * i] + p[3 * i + 2]).toBeCloseTo(1, 12);
    }
  });

  it("fits its scaling on the training rows only: predicted rows with a huge shift keep the training scale", () => {
    const base = Array.from({ length: 200 }, (_, i) => (i % 100) / 10);
    const labels = Array.from({ length: 200 }, (_, i) => ((i % 100) + (i % 7) > 50 ? 1 : 0));
    const shifted = base.map((v, i) => (i >= 100 ? v + 1e6 : v));
    const train = allRows(100);
    const onShifted = fit(classView([numeric("x", shifted)], ["0", "1"], labels, train));
    const onPlain = fit(classView([numeric("x", base)], ["0", "1"], labels, train));
    // Rows outside the training rows never move the fit.
    expect(Array.from(onShifted.weights)).toEqual(Array.from(onPlain.weights));
    expect(Array.from(onShifted.intercepts)).toEqual(Array.from(onPlain.intercepts));
    // The training mean and population std of x over rows 0..99 (values 0.0 .. 9.9).
    const mean = 4.95;
    const std = Math.sqrt(base.slice(0, 100).reduce((a, v) => a + (v - mean) ** 2, 0) / 100);
    expect(onShifted.encoding.columns[0]).toMatchObject({ mean: expect.closeTo(mean, 12), std: expect.closeTo(std, 12) });
    const p = logisticLearner.predict(onShifted, { columns: [numeric("x", shifted)], rows: Uint32Array.from({ length: 100 }, (_, i) => 100 + i) });
    for (let i = 0; i < 100; i++) {
      const z = (onShifted.weights[0] * (shifted[100 + i] - mean)) / std + onShifted.intercepts[0];
      expect(p[2 * i + 1]).toBeCloseTo(1 / (1 + Math.exp(-z)), 12);
      expect(p[2 * i + 1]).toBeGreaterThan(0.999);
    }
  });

  it("refuses to fit a single class or rows without a usable feature", () => {
    const columns = [numeric("x", [1, 2, 3])];
    expect(() => fit(classView(columns, ["a", "b"], [1, 1, 1]))).toThrow(FitError);
    expect(() => fit(classView(columns, ["a", "b"], [1, 1, 1]))).toThrow(/one class only/);
    expect(() => fit(classView([numeric("x", [4, 4, 4])], ["a", "b"], [0, 1, 0]))).toThrow(/no usable feature/);
  });
});

describe("logistic family: ridge on regression tasks", () => {
  it("equals the normal-equation solution on standardised features with an unpenalised intercept", () => {
    const a = [0.5, 1.5, -0.3, 2.2, 0.9, -1.1, 1.7, 0.2, -0.8, 1.1, 0.4, 2.9];
    const b = [3, 1, 4, 1, 5, 9, 2, 6, 5, 3, 5, 8];
    const y = a.map((v, i) => 2 * v - 0.5 * b[i] + 0.1 * ((i * 7) % 5) + 10);
    const l2 = 3;
    const model = fit(valueView([numeric("a", a), numeric("b", b)], y), { l2 });

    // Independent solution: z-scores, augmented with a constant, (AᵀA + diag(0, l2, l2))β = Aᵀy by Gaussian elimination.
    const standardise = (v: number[]) => {
      const m = v.reduce((s, t) => s + t, 0) / v.length;
      const sd = Math.sqrt(v.reduce((s, t) => s + (t - m) ** 2, 0) / v.length);
      return v.map((t) => (t - m) / sd);
    };
    const za = standardise(a);
    const zb = standardise(b);
    const rows = y.map((_, i) => [1, za[i], zb[i]]);
    const m = [0, 1, 2].map((r) => [0, 1, 2].map((c) => rows.reduce((s, row) => s + row[r] * row[c], 0) + (r === c && r > 0 ? l2 : 0)));
    const rhs = [0, 1, 2].map((r) => rows.reduce((s, row, i) => s + row[r] * y[i], 0));
    for (let col = 0; col < 3; col++)
      for (let r = col + 1; r < 3; r++) {
        const factor = m[r][col] / m[col][col];
        for (let c = col; c < 3; c++) m[r][c] -= factor * m[col][c];
        rhs[r] -= factor * rhs[col];
      }
    const beta = [0, 0, 0];
    for (let r = 2; r >= 0; r--) beta[r] = (rhs[r] - m[r].slice(r + 1).reduce((s, v, j) => s + v * beta[r + 1 + j], 0)) / m[r][r];

    expect(model.kind).toBe("ridge");
    expect(model.intercepts[0]).toBeCloseTo(beta[0], 10);
    expect(model.weights[0]).toBeCloseTo(beta[1], 10);
    expect(model.weights[1]).toBeCloseTo(beta[2], 10);
    const predicted = logisticLearner.predict(model, { columns: [numeric("a", a), numeric("b", b)], rows: allRows(12) });
    for (let i = 0; i < 12; i++) expect(predicted[i]).toBeCloseTo(beta[0] + beta[1] * za[i] + beta[2] * zb[i], 10);
  });

  it("tells the user when collinear columns leave ridge without a solution at l2 = 0", () => {
    const x = [1, 2, 3, 4, 5];
    expect(() => fit(valueView([numeric("x", x), numeric("twice", x.map((v) => 2 * v))], [1, 3, 2, 5, 4]), { l2: 0 })).toThrow(/collinear/);
  });
});

describe("logistic family: models as JSON", () => {
  const cases: Array<[string, TrainView]> = [
    ["binary", classView(gaussianClasses([[0, 0], [1, 1]], [30, 30], 1, "json-b").columns, ["a", "b"], gaussianClasses([[0, 0], [1, 1]], [30, 30], 1, "json-b").codes)],
    ["softmax", classView(gaussianClasses([[0, 0], [2, 0], [0, 2]], [20, 20, 20], 1, "json-m").columns, ["a", "b", "c"], gaussianClasses([[0, 0], [2, 0], [0, 2]], [20, 20, 20], 1, "json-m").codes)],
    ["ridge", valueView([numeric("x", [1, 2, 3, 4, 5.5]), numeric("w", [0.3, 0.1, 0.4, 0.1, 0.5])], [2.1, 3.9, 6.2, 8.1, 9.7])],
  ];
  for (const [name, view] of cases) {
    it(`predicts bit for bit the same after a JSON round trip (${name})`, () => {
      const model = fit(view);
      const restored = logisticLearner.fromJSON(JSON.parse(JSON.stringify(logisticLearner.toJSON(model))));
      const before = logisticLearner.predict(model, view);
      const after = logisticLearner.predict(restored, view);
      expect(Buffer.from(after.buffer).equals(Buffer.from(before.buffer))).toBe(true);
    });
  }

  it("rejects a damaged model file with the key that is wrong", () => {
    const json = { ...logisticLearner.toJSON(fit(cases[0][1])), weights: "nonsense" };
    expect(() => logisticLearner.fromJSON(json)).toThrow(/logistic model\.weights/);
  });
});

describe("logistic family: parameters", () => {
  it("fills defaults and rejects bad values with the family, parameter and range", () => {
    expect(parseFamilyParams("logistic", logisticLearner.params, {})).toEqual({
      l2: 1,
      class_weight: "none",
      max_iterations: 500,
      tolerance: 1e-6,
      missing_indicators: true,
    });
    const message = (input: unknown) => {
      try {
        parseFamilyParams("logistic", logisticLearner.params, input);
      } catch (error) {
        expect(error).toBeInstanceOf(ParamError);
        return (error as Error).message;
      }
      return "accepted";
    };
    expect(message({ l2: -1 })).toBe("logistic.l2: must be >= 0 (got -1)");
    expect(message({ class_weight: "heavy" })).toBe('logistic.class_weight: must be one of "none", "balanced" (got "heavy")');
    expect(message({ max_iterations: 2.5 })).toBe("logistic.max_iterations: must be an integer (got 2.5)");
    expect(message({ tolerance: 0 })).toBe("logistic.tolerance: must be > 0 (got 0)");
    expect(message({ penalty: 1 })).toMatch(/^logistic\.penalty: unknown parameter \(allowed: l2, /);
  });
});
