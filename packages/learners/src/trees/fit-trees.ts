import { createRng, predictionWidth, type Rng, type TableView, type Task, type TrainView } from "@nightshift/core";
import { type BinMapper, binRows, binTrainingRows } from "../binning/bin-mapper.js";
import { type FitContext, FitError } from "../learner.js";
import { type GrowData, TreeGrower } from "./grow-tree.js";
import { CRITERION_ENTROPY, CRITERION_GINI, CRITERION_SQUARED_ERROR, type CriterionCode } from "./impurity.js";
import { addTreePredictions } from "./predict-tree.js";
import type { TreeArrays } from "./tree-model.js";

export type TreeFamily = "tree" | "forest" | "extra_trees";

/** A fitted tree, forest or extra-trees ensemble: the training bin mapper and the trees. */
export interface TreeEnsembleModel {
  readonly family: TreeFamily;
  readonly task: Task;
  /** Prediction columns per row: classes, or 1 for regression. */
  readonly width: number;
  /** Feature columns the model was fitted on (predicted views must have the same columns). */
  readonly featureCount: number;
  readonly mapper: BinMapper;
  readonly trees: readonly TreeArrays[];
}

/** What a family's parameters resolve to. */
export interface EnsembleSettings {
  readonly trees: number;
  readonly criterion: "gini" | "entropy";
  readonly depth: number | null;
  readonly minLeaf: number;
  readonly minSplit: number;
  readonly classWeight: "none" | "balanced";
  readonly bins: number;
  /** Share of features tried per split; null = √p/p for classification, all for regression. */
  readonly splitFeatures: number | null;
  readonly rowSample: number;
  readonly bootstrap: boolean;
  readonly randomCuts: boolean;
}

const SEED_RANGE = 2 ** 32;

/**
 * Fits `settings.trees` trees on the training view. Each tree's randomness comes from its own
 * stream, seeded by a number drawn from `rng` before any tree is grown, so tree t is the same
 * whatever the other trees did.
 *
 * Per tree: a bootstrap sample (n·row_sample draws with replacement, kept as per-row counts;
 * Breiman 2001), or without bootstrap n·row_sample distinct rows (all rows when row_sample = 1).
 */
export function fitTrees(family: TreeFamily, view: TrainView, settings: EnsembleSettings, rng: Rng, context?: FitContext): TreeEnsembleModel {
  const n = view.rows.length;
  if (n === 0) throw new FitError(family, "no training rows");
  const seeds = new Float64Array(settings.trees);
  for (let t = 0; t < settings.trees; t++) seeds[t] = rng.int(SEED_RANGE);
  // Bins depend on the training rows alone (no draw from rng), so a fold's bins are reused from the worker's memo.
  const { mapper, binned } = binTrainingRows(view, settings.bins, context);
  const usable: number[] = [];
  for (let f = 0; f < binned.binCounts.length; f++) if (binned.binCounts[f] >= 2) usable.push(f);
  if (usable.length === 0) throw new FitError(family, "no usable feature: every feature is constant or missing in the training rows");

  const { data, width, criterion } = targetData(family, view, binned.bins, binned.categorical, Int32Array.from(usable), settings);
  const p = view.columns.length;
  const regression = view.task === "regression";
  const share = settings.splitFeatures;
  const splitFeatures = share === null ? (regression ? p : Math.max(1, Math.floor(Math.sqrt(p)))) : Math.max(1, Math.floor(share * p + 1e-9));
  const grower = new TreeGrower(
    data,
    {
      criterion,
      maxDepth: settings.depth ?? Infinity,
      minLeaf: settings.minLeaf,
      minSplit: settings.minSplit,
      splitFeatures,
      randomCuts: settings.randomCuts,
    },
    n,
  );

  const counts = new Float64Array(n);
  const picks = settings.bootstrap || settings.rowSample < 1 ? new Uint32Array(n) : null;
  const draws = Math.max(1, Math.round(settings.rowSample * n));
  const trees: TreeArrays[] = [];
  for (let t = 0; t < settings.trees; t++) {
    const treeRng = createRng(seeds[t], "tree");
    sampleRows(counts, picks, draws, settings.bootstrap, treeRng);
    trees.push(grower.grow(counts, treeRng));
  }
  return { family, task: view.task, width, featureCount: p, mapper, trees };
}

/** Class probabilities (mean over trees of the leaves' class shares) or mean predicted values. */
export function predictTrees(model: TreeEnsembleModel, view: TableView): Float64Array {
  if (view.columns.length !== model.featureCount) {
    throw new RangeError(`${model.family}: model was fitted on ${model.featureCount} feature columns, given ${view.columns.length}`);
  }
  const binned = binRows(model.mapper, view);
  const rowCount = view.rows.length;
  const out = new Float64Array(rowCount * model.width);
  for (const tree of model.trees) addTreePredictions(tree, binned.bins, rowCount, model.width, out);
  const scale = 1 / model.trees.length;
  if (model.trees.length > 1) for (let i = 0; i < out.length; i++) out[i] *= scale;
  return out;
}

function targetData(
  family: TreeFamily,
  view: TrainView,
  bins: readonly Uint8Array[],
  categorical: readonly boolean[],
  usable: Int32Array,
  settings: EnsembleSettings,
): { data: GrowData; width: number; criterion: CriterionCode } {
  const n = view.rows.length;
  const target = view.target;
  if (view.task === "regression") {
    if (target.kind !== "values") throw new FitError(family, "a regression task needs a numeric target");
    const values = new Float64Array(n);
    for (let r = 0; r < n; r++) {
      values[r] = target.values[view.rows[r]];
      if (!Number.isFinite(values[r])) throw new FitError(family, `target is missing or not finite in training row ${view.rows[r]}`);
    }
    const data: GrowData = { bins, rowBins: rowMajor(bins, n), categorical, usable, classes: null, classCount: 0, values, classWeight: new Float64Array(0) };
    return { data, width: predictionWidth("regression", 1), criterion: CRITERION_SQUARED_ERROR };
  }
  if (target.kind !== "classes") throw new FitError(family, `a ${view.task} task needs a class target`);
  const classCount = target.labels.length;
  const classes = new Int32Array(n);
  const perClass = new Float64Array(classCount);
  for (let r = 0; r < n; r++) {
    const code = target.codes[view.rows[r]];
    if (!(code >= 0 && code < classCount)) throw new FitError(family, `class code ${code} of training row ${view.rows[r]} is not one of the ${classCount} labels`);
    classes[r] = code;
    perClass[code]++;
  }
  let present = 0;
  for (let c = 0; c < classCount; c++) if (perClass[c] > 0) present++;
  if (present < 2) throw new FitError(family, `only one class in the training rows (${target.labels[classes[0]]}); nothing to separate`);
  const classWeight = new Float64Array(classCount).fill(1);
  if (settings.classWeight === "balanced") {
    // w_c = n / (C · n_c) over the classes present (King & Zeng 2001; METHODS.md §9).
    for (let c = 0; c < classCount; c++) classWeight[c] = perClass[c] > 0 ? n / (present * perClass[c]) : 1;
  }
  const data: GrowData = { bins, rowBins: rowMajor(bins, n), categorical, usable, classes, classCount, values: null, classWeight };
  return { data, width: predictionWidth(view.task, classCount), criterion: settings.criterion === "entropy" ? CRITERION_ENTROPY : CRITERION_GINI };
}

function sampleRows(counts: Float64Array, picks: Uint32Array | null, draws: number, bootstrap: boolean, rng: Rng): void {
  const n = counts.length;
  if (bootstrap) {
    counts.fill(0);
    for (let i = 0; i < draws; i++) counts[rng.int(n)]++;
    return;
  }
  if (picks === null || draws >= n) {
    counts.fill(1);
    return;
  }
  counts.fill(0);
  for (let i = 0; i < n; i++) picks[i] = i;
  for (let i = 0; i < draws; i++) {
    const j = i + rng.int(n - i);
    const row = picks[j];
    picks[j] = picks[i];
    picks[i] = row;
    counts[row] = 1;
  }
}

/** Above this many bytes the row-major copy of the bins is not made (nodes then read columns). */
const ROW_MAJOR_BYTES = 2 ** 28;

function rowMajor(bins: readonly Uint8Array[], rows: number): Uint8Array | null {
  const p = bins.length;
  if (rows * p > ROW_MAJOR_BYTES) return null;
  const out = new Uint8Array(rows * p);
  for (let f = 0; f < p; f++) {
    const column = bins[f];
    for (let r = 0; r < rows; r++) out[r * p + f] = column[r];
  }
  return out;
}
