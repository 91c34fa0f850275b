import type { Rng, TableView, Task, TrainView } from "@nightshift/core";
import { type BinMapper, binCount, fitBinMapper } from "../binning/bin-mapper.js";
import { type FitContext, FitError, type Learner } from "../learner.js";
import { binTrainingRows } from "./bin-search.js";
import { TreeGrower } from "./grow-tree.js";
import { histogramLayout, rowMajorBins } from "./histogram.js";
import { boostedFromJSON, boostedToJSON } from "./model-json.js";
import { binaryLogLoss, type Objective, softmaxLoss, squaredError } from "./objectives.js";
import { type BoostedParams, BoostedParamsSchema } from "./params.js";
import { addTreeScores, type CompiledTrees, compileTrees, MAX_FEATURES } from "./predict.js";
import { EnsembleBuilder, type TreeEnsemble } from "./tree-ensemble.js";
import { validationSplit } from "./validation-split.js";

/** A fitted boosted model: plain data (typed arrays), no functions. */
export interface BoostedModel {
  readonly task: Task;
  /** Class labels (classification) or null (regression). */
  readonly labels: readonly string[] | null;
  /** Raw scores per row: 1 (binary, regression) or the class count (softmax). */
  readonly outputs: number;
  readonly featureNames: readonly string[];
  /** The training bin mapper: numeric thresholds are its edges, categories its bins. */
  readonly mapper: BinMapper;
  /** F_0 per output. */
  readonly init: Float64Array;
  readonly trees: TreeEnsemble;
  /** Rounds run and the round kept (early stopping), or null when every round was kept. */
  readonly stopping: { readonly roundsRun: number; readonly bestRound: number; readonly validationRows: number } | null;
  readonly compiled: CompiledTrees;
}

/** Relative improvement of the validation loss that counts as progress for early stopping. */
const IMPROVEMENT = 1e-7;

export function fitBoosted(view: TrainView, params: BoostedParams, rng: Rng, context?: FitContext): BoostedModel {
  const n = view.rows.length;
  if (n < 2) throw new FitError("boosted", `needs at least 2 training rows (got ${n})`);
  const target = view.target;
  if (view.columns.length > MAX_FEATURES) throw new FitError("boosted", `supports at most ${MAX_FEATURES} features (got ${view.columns.length})`);

  let classes: Int32Array | null = null;
  let values: Float64Array | null = null;
  let classCount = 0;
  if (view.task === "regression") {
    if (target.kind !== "values") throw new FitError("boosted", "a regression task needs a numeric target");
    if (params.class_weight !== "none") throw new FitError("boosted", "class_weight 'balanced' needs a classification task");
    values = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      values[i] = target.values[view.rows[i]];
      if (!Number.isFinite(values[i])) throw new FitError("boosted", `target ${target.name} is missing or not finite on a training row`);
    }
  } else {
    if (target.kind !== "classes") throw new FitError("boosted", "a classification task needs a class target");
    classCount = target.labels.length;
    if (view.task === "binary" && classCount !== 2) throw new FitError("boosted", `a binary task needs 2 class labels (got ${classCount})`);
    classes = new Int32Array(n);
    for (let i = 0; i < n; i++) {
      const code = target.codes[view.rows[i]];
      if (!(code >= 0 && code < classCount)) throw new FitError("boosted", `target ${target.name} is missing on a training row`);
      classes[i] = code;
    }
  }

  const classSizes = new Float64Array(classCount);
  let present = 0;
  if (classes !== null && target.kind === "classes") {
    for (let i = 0; i < n; i++) classSizes[classes[i]]++;
    present = classSizes.reduce((count, size) => count + (size > 0 ? 1 : 0), 0);
    if (present < 2) throw new FitError("boosted", `the training rows hold only one class (${target.labels[classes[0]]}); at least two are needed`);
  }

  // METHODS.md §9: balanced weights n / (C · n_c) over the classes present.
  let weights: Float64Array | null = null;
  if (classes !== null && params.class_weight === "balanced") {
    weights = new Float64Array(n);
    for (let i = 0; i < n; i++) weights[i] = n / (present * classSizes[classes[i]]);
  }

  const split = params.early_stop > 0 ? validationSplit(n, params.early_stop, rng, classes, classCount) : null;
  const fitPositions = split === null || split.validation.length === 0 ? allPositions(n) : split.fit;
  const validation = split === null || split.validation.length === 0 ? null : split.validation;

  // Bins are placed on the fitting rows only; every training position is then binned with them.
  const fitRows = new Uint32Array(fitPositions.length);
  for (let i = 0; i < fitPositions.length; i++) fitRows[i] = view.rows[fitPositions[i]];
  // Bins depend on the fitting rows alone (never on rng), so without an early-stopping slice the
  // fold's bins are shared through the worker's memo by every boosted fit on that fold.
  const computeBins = () => {
    const fitted = fitBinMapper({ columns: view.columns, rows: fitRows }, params.bins);
    const counts = Uint16Array.from(fitted.features, binCount);
    // Local bins: the missing values of feature f go to bin counts[f], right after its value bins.
    return { mapper: fitted, valueBins: counts, columnBins: binTrainingRows(fitted, view, counts) };
  };
  const memoKey = context && validation === null ? `${context.key}:boosted-bins:${params.bins}:${n}` : null;
  let binning = memoKey ? (context?.memo.get(memoKey) as ReturnType<typeof computeBins> | undefined) : undefined;
  if (!binning) {
    binning = computeBins();
    if (memoKey) context?.memo.set(memoKey, binning);
  }
  const { mapper, valueBins, columnBins } = binning;
  const features = mapper.features.length;
  const categorical = Uint8Array.from(mapper.features, (bins) => (bins.kind === "categorical" ? 1 : 0));
  const usable: number[] = [];
  for (let f = 0; f < features; f++) if (takesTwoBins(columnBins[f], fitPositions)) usable.push(f);
  if (usable.length === 0) throw new FitError("boosted", "no usable feature: every feature is constant or missing on the training rows");

  const objective: Objective =
    classes === null
      ? squaredError(values as Float64Array)
      : view.task === "binary"
        ? binaryLogLoss(classes, weights)
        : softmaxLoss(classes, classCount, weights, n);
  const outputs = objective.outputs;
  const init = objective.initialScores(fitPositions);
  const raw = new Float64Array(n * outputs);
  for (let i = 0; i < n; i++) for (let k = 0; k < outputs; k++) raw[i * outputs + k] = init[k];
  const grad = new Float64Array(n * outputs);
  const hess = new Float64Array(n * outputs);

  const layout = histogramLayout(valueBins);
  const grower = new TreeGrower(
    { columnBins, rowBins: rowMajorBins(columnBins, n), layout, categorical, rowCount: n },
    {
      maxLeaves: params.leaves,
      maxDepth: params.depth ?? Infinity,
      learningRate: params.learning_rate,
      l2: params.l2,
      minLeaf: params.min_leaf,
      minHessian: params.min_hessian,
      minGain: params.min_gain,
    },
    objective.constantHessian,
  );
  const ensemble = new EnsembleBuilder();

  const featurePool = Int32Array.from(usable);
  const featureTake = Math.max(1, Math.round(params.split_features * usable.length));
  const chosen = new Int32Array(usable.length);
  const sampled = new Uint32Array(fitPositions.length);
  const unsampled = new Uint32Array(fitPositions.length);

  let bestLoss = validation === null ? Infinity : objective.loss(raw, validation);
  let bestRound = 0;
  let roundsRun = 0;
  for (let round = 1; round <= params.rounds; round++) {
    objective.gradients(raw, fitPositions, grad, hess);
    let sampledCount = 0;
    let unsampledCount = 0;
    if (params.row_sample < 1) {
      for (let i = 0; i < fitPositions.length; i++) {
        if (rng.next() < params.row_sample) sampled[sampledCount++] = fitPositions[i];
        else unsampled[unsampledCount++] = fitPositions[i];
      }
      if (sampledCount === 0) sampled[sampledCount++] = unsampled[--unsampledCount];
    } else {
      sampled.set(fitPositions);
      sampledCount = fitPositions.length;
    }

    for (let k = 0; k < outputs; k++) {
      const featureCount = chooseFeatures(featurePool, featureTake, chosen, rng);
      grower.rows.set(sampled.subarray(0, sampledCount));
      grower.grow(grad.subarray(k * n, (k + 1) * n), hess.subarray(k * n, (k + 1) * n), sampledCount, chosen, featureCount);
      ensemble.append(grower);
      // Rows that grew the tree know their leaf from the partition; the others walk the tree.
      for (let leaf = 0; leaf < grower.leafCount; leaf++) {
        const value = grower.nodeValue[grower.leafNode[leaf]];
        for (let i = grower.leafStart[leaf]; i < grower.leafEnd[leaf]; i++) raw[grower.rows[i] * outputs + k] += value;
      }
      for (let i = 0; i < unsampledCount; i++) raw[unsampled[i] * outputs + k] += grower.nodeValue[grower.leafOf(unsampled[i])];
      if (validation !== null)
        for (let i = 0; i < validation.length; i++) raw[validation[i] * outputs + k] += grower.nodeValue[grower.leafOf(validation[i])];
    }
    roundsRun = round;

    if (validation !== null) {
      const loss = objective.loss(raw, validation);
      if (loss < bestLoss - IMPROVEMENT * Math.abs(bestLoss)) {
        bestLoss = loss;
        bestRound = round;
      } else if (round - bestRound >= params.patience) {
        break;
      }
    }
  }

  const keptRounds = validation === null ? roundsRun : bestRound;
  const trees = ensemble.finish(keptRounds * outputs);
  return {
    task: view.task,
    labels: target.kind === "classes" ? [...target.labels] : null,
    outputs,
    featureNames: view.columns.map((column) => column.name),
    mapper,
    init,
    trees,
    stopping: validation === null ? null : { roundsRun, bestRound, validationRows: validation.length },
    compiled: compileTrees(trees, mapper),
  };
}

function allPositions(n: number): Uint32Array {
  const positions = new Uint32Array(n);
  for (let i = 0; i < n; i++) positions[i] = i;
  return positions;
}

/** Whether the feature takes at least two bins (missing counts as one) on the given rows. */
function takesTwoBins(column: Uint8Array, positions: Uint32Array): boolean {
  const first = column[positions[0]];
  for (let i = 1; i < positions.length; i++) if (column[positions[i]] !== first) return true;
  return false;
}

/** Draws `take` of the pool's features without replacement (per tree), sorted for memory order. */
function chooseFeatures(pool: Int32Array, take: number, chosen: Int32Array, rng: Rng): number {
  if (take >= pool.length) {
    chosen.set(pool);
    return pool.length;
  }
  chosen.set(pool);
  for (let i = 0; i < take; i++) {
    const j = i + rng.int(pool.length - i);
    const tmp = chosen[i];
    chosen[i] = chosen[j];
    chosen[j] = tmp;
  }
  chosen.subarray(0, take).sort();
  return take;
}

/** Class probabilities (row-major, one column per class; binary too) or regression values. */
export function predictBoosted(model: BoostedModel, view: TableView): Float64Array {
  const features = model.mapper.features.length;
  if (view.columns.length !== features) {
    throw new TypeError(`boosted model was fitted on ${features} features, given ${view.columns.length}`);
  }
  const n = view.rows.length;
  const outputs = model.outputs;
  const raw = new Float64Array(n * outputs);
  for (let i = 0; i < n; i++) for (let k = 0; k < outputs; k++) raw[i * outputs + k] = model.init[k];
  addTreeScores(model.compiled, model.mapper, view, outputs, raw);
  if (model.task === "regression") return raw;
  if (model.task === "binary") {
    const probabilities = new Float64Array(2 * n);
    for (let i = 0; i < n; i++) {
      const p = 1 / (1 + Math.exp(-raw[i]));
      probabilities[2 * i] = 1 - p;
      probabilities[2 * i + 1] = p;
    }
    return probabilities;
  }
  for (let i = 0; i < n; i++) {
    const base = i * outputs;
    let top = -Infinity;
    for (let k = 0; k < outputs; k++) top = Math.max(top, raw[base + k]);
    let sum = 0;
    for (let k = 0; k < outputs; k++) sum += raw[base + k] = Math.exp(raw[base + k] - top);
    for (let k = 0; k < outputs; k++) raw[base + k] /= sum;
  }
  return raw;
}

/**
 * Histogram gradient boosting (Friedman 2001; Chen & Guestrin 2016; Ke et al. 2017): quantile
 * bins, second-order leaf-wise trees, shrinkage, row and feature subsampling, learned missing
 * directions, native categorical splits and optional early stopping on a held-out slice.
 */
export const boostedLearner: Learner<BoostedParams, BoostedModel> = {
  family: "boosted",
  params: BoostedParamsSchema,
  fit: fitBoosted,
  predict: predictBoosted,
  toJSON: boostedToJSON,
  fromJSON: boostedFromJSON,
};
