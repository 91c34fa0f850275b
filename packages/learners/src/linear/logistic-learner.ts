import type { FitContext } from "../learner.js";
import { InputError, type Rng, type TableView, type TrainView } from "@nightshift/core";
import { z } from "zod";
import { FitError, type Learner, type ModelJson } from "../learner.js";
import { designMatrix, DesignEncodingSchema, type DesignEncoding, trainingDesign } from "../preprocess/design-matrix.js";
import { classWeights } from "./class-weights.js";
import { createLinearKernels } from "./linear-kernels.js";
import { fitLogistic } from "./logistic.js";
import { multiplyRows } from "./matrix-products.js";
import { LogisticParamsSchema, type LogisticParams } from "./params.js";
import { fitRidge } from "./ridge.js";

/**
 * A fitted linear model: `logistic` (one weight row for the second of two classes), `softmax`
 * (one weight row per class) or `ridge` (regression), over the standardised design columns.
 */
export interface LinearModel {
  readonly kind: "logistic" | "softmax" | "ridge";
  readonly params: LogisticParams;
  readonly encoding: DesignEncoding;
  /** Prediction width: the number of class labels (also for binary), 1 for regression. */
  readonly outputs: number;
  /** Label index of each fitted class (logistic: [negative, positive]; softmax: K classes; ridge: none). Absent classes get probability 0. */
  readonly classes: Int32Array;
  /** Row-major weights, one row of `encoding.width` per score. */
  readonly weights: Float64Array;
  readonly intercepts: Float64Array;
  /** How L-BFGS ended (null for ridge, solved in closed form). */
  readonly optimisation: { readonly iterations: number; readonly converged: boolean; readonly gradientNorm: number; readonly objective: number } | null;
}

const LinearModelJsonSchema = z
  .object({
    family: z.literal("logistic"),
    kind: z.enum(["logistic", "softmax", "ridge"]),
    params: LogisticParamsSchema,
    encoding: DesignEncodingSchema,
    outputs: z.number().int().positive(),
    classes: z.array(z.number().int().nonnegative()),
    weights: z.array(z.number()),
    intercepts: z.array(z.number()),
    optimisation: z
      .object({ iterations: z.number().int().nonnegative(), converged: z.boolean(), gradientNorm: z.number(), objective: z.number() })
      .strict()
      .nullable(),
  })
  .strict();

export function fitLinear(view: TrainView, params: LogisticParams, context?: FitContext): LinearModel {
  const encoding = trainingDesign(view, { missingIndicators: params.missing_indicators }, context);
  if (encoding.width === 0) throw new FitError("logistic", "no usable feature: every feature column is constant or missing in the training rows");
  const n = view.rows.length;
  const p = encoding.width;
  const target = view.target;

  if (view.task === "regression") {
    const x = designMatrix(encoding, view);
    if (target.kind !== "values") throw new TypeError("logistic: a regression task needs a numeric target");
    const y = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      y[i] = target.values[view.rows[i]];
      if (!Number.isFinite(y[i])) throw new FitError("logistic", `training row ${view.rows[i]} has no target value`);
    }
    const fit = fitRidge(x, n, p, y, params.l2 / n);
    if (fit === null) throw new FitError("logistic", "the design columns are collinear and l2 = 0: ridge needs l2 > 0 here");
    return { kind: "ridge", params, encoding, outputs: 1, classes: new Int32Array(0), weights: fit.weights, intercepts: Float64Array.of(fit.intercept), optimisation: null };
  }

  if (target.kind !== "classes") throw new TypeError(`logistic: a ${view.task} task needs a class target`);
  const labelCount = target.labels.length;
  const counts = new Float64Array(labelCount);
  for (let i = 0; i < n; i++) {
    const code = target.codes[view.rows[i]];
    if (!(code >= 0 && code < labelCount)) throw new FitError("logistic", `training row ${view.rows[i]} has no class`);
    counts[code]++;
  }
  const present: number[] = [];
  for (let c = 0; c < labelCount; c++) if (counts[c] > 0) present.push(c);
  if (present.length < 2)
    throw new FitError("logistic", `the training rows hold one class only (${JSON.stringify(target.labels[present[0]] ?? "")}); nothing to separate`);
  const indexOfLabel = new Int32Array(labelCount).fill(-1);
  present.forEach((label, index) => (indexOfLabel[label] = index));
  const classOf = new Int32Array(n);
  for (let i = 0; i < n; i++) classOf[i] = indexOfLabel[target.codes[view.rows[i]]];

  const scoreCount = present.length === 2 ? 1 : present.length;
  const design = createLinearKernels(n, p, scoreCount, 3);
  designMatrix(encoding, view, { out: design.x, stride: design.stride });
  const fit = fitLogistic(
    { design, rows: n, width: p, classOf, classCount: present.length, classWeights: classWeights(classOf, present.length, params.class_weight), penalty: params.l2 / n },
    { maxIterations: params.max_iterations, tolerance: params.tolerance },
  );
  const { iterations, converged, gradientNorm, value } = fit.optimisation;
  return {
    kind: present.length === 2 ? "logistic" : "softmax",
    params,
    encoding,
    outputs: labelCount,
    classes: Int32Array.from(present),
    weights: fit.weights,
    intercepts: fit.intercepts,
    optimisation: { iterations, converged, gradientNorm, objective: value },
  };
}

/** Class probabilities (row-major, width = number of labels) or regression values of the rows of `view`. */
export function predictLinear(model: LinearModel, view: TableView): Float64Array {
  const n = view.rows.length;
  const p = model.encoding.width;
  const x = designMatrix(model.encoding, view);
  const scoreCount = model.intercepts.length;
  const scores = new Float64Array(n * scoreCount);
  multiplyRows(x, n, p, model.weights, model.intercepts, scoreCount, scores);
  if (model.kind === "ridge") return scores;

  const width = model.outputs;
  const out = new Float64Array(n * width);
  const classes = model.classes;
  if (model.kind === "logistic") {
    const [negative, positive] = classes;
    for (let i = 0; i < n; i++) {
      const p1 = 1 / (1 + Math.exp(-scores[i]));
      out[i * width + negative] = 1 - p1;
      out[i * width + positive] = p1;
    }
    return out;
  }
  for (let i = 0, o = 0; i < n; i++, o += scoreCount) {
    let largest = -Infinity;
    for (let c = 0; c < scoreCount; c++) largest = Math.max(largest, scores[o + c]);
    let sum = 0;
    for (let c = 0; c < scoreCount; c++) {
      scores[o + c] = Math.exp(scores[o + c] - largest);
      sum += scores[o + c];
    }
    for (let c = 0; c < scoreCount; c++) out[i * width + classes[c]] = scores[o + c] / sum;
  }
  return out;
}

export function linearModelToJSON(model: LinearModel): ModelJson {
  return {
    family: "logistic",
    kind: model.kind,
    params: model.params,
    encoding: model.encoding,
    outputs: model.outputs,
    classes: Array.from(model.classes),
    weights: Array.from(model.weights),
    intercepts: Array.from(model.intercepts),
    optimisation: model.optimisation,
  };
}

export function linearModelFromJSON(json: ModelJson): LinearModel {
  const parsed = LinearModelJsonSchema.safeParse(json);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    throw new InputError(`logistic model${issue.path.length > 0 ? `.${issue.path.join(".")}` : ""}`, issue.message);
  }
  const m = parsed.data;
  const scoreCount = m.intercepts.length;
  if (m.weights.length !== scoreCount * m.encoding.width)
    throw new InputError("logistic model.weights", `expected ${scoreCount * m.encoding.width} weights, found ${m.weights.length}`);
  return {
    kind: m.kind,
    params: m.params,
    encoding: m.encoding,
    outputs: m.outputs,
    classes: Int32Array.from(m.classes),
    weights: Float64Array.from(m.weights),
    intercepts: Float64Array.from(m.intercepts),
    optimisation: m.optimisation,
  };
}

/** The `logistic` family: logistic / softmax regression on classification tasks, ridge on regression. */
export const logisticLearner: Learner<LogisticParams, LinearModel> = {
  family: "logistic",
  params: LogisticParamsSchema,
  fit: (view: TrainView, params: LogisticParams, _rng: Rng, context?: FitContext) => fitLinear(view, params, context),
  predict: predictLinear,
  toJSON: linearModelToJSON,
  fromJSON: linearModelFromJSON,
};
