import type { FitContext } from "../learner.js";
import { InputError, type Rng, type TableView, type Task, TaskSchema, type TrainView } from "@nightshift/core";
import { z } from "zod";
import { FitError, type Learner, type ModelJson } from "../learner.js";
import { designMatrix, DesignEncodingSchema, type DesignEncoding, trainingDesign } from "../preprocess/design-matrix.js";
import { float64FromBase64, int32FromBase64, typedArrayToBase64 } from "../typed-array-base64.js";
import { nearestNeighbours } from "./neighbour-search.js";
import { KnnParamsSchema, type KnnParams } from "./params.js";

/**
 * k nearest neighbours (Fix & Hodges 1951; Cover & Hart 1967) on the standardised design
 * columns of preprocess/design-matrix.ts. Fitting stores the training rows; a prediction is the
 * (weighted) share of each class among the k nearest training rows, or their (weighted) mean
 * target. Neighbours are exact (neighbour-search.ts); equal distances are broken by training row
 * order, so the lower row is the nearer.
 */
export interface KnnModel {
  readonly params: KnnParams;
  readonly task: Task;
  readonly encoding: DesignEncoding;
  /** Prediction width: the number of class labels (also for binary), 1 for regression. */
  readonly outputs: number;
  readonly rows: number;
  /** Standardised training rows, row-major rows × encoding.width. */
  readonly train: Float64Array;
  /** Class label index of each training row (classification). */
  readonly classes: Int32Array;
  /** Target of each training row (regression). */
  readonly values: Float64Array;
}

const KnnModelJsonSchema = z
  .object({
    family: z.literal("knn"),
    params: KnnParamsSchema,
    task: TaskSchema,
    encoding: DesignEncodingSchema,
    outputs: z.number().int().positive(),
    rows: z.number().int().positive(),
    /** Base64 of little-endian float64 / int32 values. */
    train: z.string(),
    classes: z.string(),
    values: z.string(),
  })
  .strict();

export function fitKnn(view: TrainView, params: KnnParams, context?: FitContext): KnnModel {
  const encoding = trainingDesign(view, { missingIndicators: params.missing_indicators }, context);
  if (encoding.width === 0) throw new FitError("knn", "no usable feature: every feature column is constant or missing in the training rows");
  const n = view.rows.length;
  const target = view.target;
  let classes = new Int32Array(0);
  let values = new Float64Array(0);
  let outputs = 1;
  if (view.task === "regression") {
    if (target.kind !== "values") throw new TypeError("knn: a regression task needs a numeric target");
    values = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      values[i] = target.values[view.rows[i]];
      if (!Number.isFinite(values[i])) throw new FitError("knn", `training row ${view.rows[i]} has no target value`);
    }
  } else {
    if (target.kind !== "classes") throw new TypeError(`knn: a ${view.task} task needs a class target`);
    outputs = target.labels.length;
    classes = new Int32Array(n);
    const seen = new Set<number>();
    for (let i = 0; i < n; i++) {
      const code = target.codes[view.rows[i]];
      if (!(code >= 0 && code < outputs)) throw new FitError("knn", `training row ${view.rows[i]} has no class`);
      classes[i] = code;
      seen.add(code);
    }
    if (seen.size < 2) throw new FitError("knn", `the training rows hold one class only (${JSON.stringify(target.labels[classes[0]] ?? "")}); nothing to separate`);
  }
  return { params, task: view.task, encoding, outputs, rows: n, train: designMatrix(encoding, view), classes, values };
}

/** Class probabilities (row-major, width = number of labels) or regression values of the rows of `view`. */
export function predictKnn(model: KnnModel, view: TableView): Float64Array {
  const m = view.rows.length;
  const p = model.encoding.width;
  const queries = designMatrix(model.encoding, view);
  const { k, rows, squaredDistances } = nearestNeighbours(model.train, model.rows, queries, m, p, model.params.k);
  const distanceWeights = model.params.weights === "distance";
  const weights = new Float64Array(k);
  const width = model.outputs;
  const out = new Float64Array(m * width);
  const sums = new Float64Array(width);
  for (let q = 0; q < m; q++) {
    const base = q * k;
    if (distanceWeights) neighbourWeights(squaredDistances, base, k, weights);
    else weights.fill(1);
    if (model.task === "regression") {
      let weighted = 0;
      let total = 0;
      for (let j = 0; j < k; j++) {
        weighted += weights[j] * model.values[rows[base + j]];
        total += weights[j];
      }
      out[q] = weighted / total;
    } else {
      sums.fill(0);
      for (let j = 0; j < k; j++) sums[model.classes[rows[base + j]]] += weights[j];
      let total = 0;
      for (let c = 0; c < width; c++) total += sums[c];
      for (let c = 0; c < width; c++) out[q * width + c] = sums[c] / total;
    }
  }
  return out;
}

/**
 * 1 / distance, except that neighbours at distance 0 share all the weight (the others get none),
 * as scikit-learn's KNeighborsClassifier does with weights="distance".
 */
function neighbourWeights(squaredDistances: Float64Array, base: number, k: number, weights: Float64Array): void {
  let exact = false;
  for (let j = 0; j < k; j++) if (squaredDistances[base + j] === 0) exact = true;
  for (let j = 0; j < k; j++) {
    const d = squaredDistances[base + j];
    weights[j] = exact ? (d === 0 ? 1 : 0) : 1 / Math.sqrt(d);
  }
}

export function knnModelToJSON(model: KnnModel): ModelJson {
  return {
    family: "knn",
    params: model.params,
    task: model.task,
    encoding: model.encoding,
    outputs: model.outputs,
    rows: model.rows,
    train: typedArrayToBase64(model.train),
    classes: typedArrayToBase64(model.classes),
    values: typedArrayToBase64(model.values),
  };
}

export function knnModelFromJSON(json: ModelJson): KnnModel {
  const parsed = KnnModelJsonSchema.safeParse(json);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    throw new InputError(`knn model${issue.path.length > 0 ? `.${issue.path.join(".")}` : ""}`, issue.message);
  }
  const m = parsed.data;
  const train = float64FromBase64(m.train, "knn model.train");
  const classes = int32FromBase64(m.classes, "knn model.classes");
  const values = float64FromBase64(m.values, "knn model.values");
  if (train.length !== m.rows * m.encoding.width) throw new InputError("knn model.train", `expected ${m.rows * m.encoding.width} values, found ${train.length}`);
  const targets = m.task === "regression" ? values.length : classes.length;
  if (targets !== m.rows) throw new InputError(`knn model.${m.task === "regression" ? "values" : "classes"}`, `expected ${m.rows} targets, found ${targets}`);
  return { params: m.params, task: m.task, encoding: m.encoding, outputs: m.outputs, rows: m.rows, train, classes, values };
}

/** The `knn` family. */
export const knnLearner: Learner<KnnParams, KnnModel> = {
  family: "knn",
  params: KnnParamsSchema,
  fit: (view: TrainView, params: KnnParams, _rng: Rng, context?: FitContext) => fitKnn(view, params, context),
  predict: predictKnn,
  toJSON: knnModelToJSON,
  fromJSON: knnModelFromJSON,
};
