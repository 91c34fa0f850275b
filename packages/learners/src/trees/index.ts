import type { Learner } from "../learner.js";
import { type EnsembleSettings, fitTrees, predictTrees, type TreeEnsembleModel } from "./fit-trees.js";
import { treeModelFromJSON, treeModelToJSON } from "./model-json.js";
import {
  type ExtraTreesParams,
  ExtraTreesParamsSchema,
  type ForestParams,
  ForestParamsSchema,
  type TreeParams,
  TreeParamsSchema,
} from "./tree-params.js";

export type { TreeEnsembleModel, TreeFamily } from "./fit-trees.js";
export type { TreeArrays } from "./tree-model.js";
export { ExtraTreesParamsSchema, ForestParamsSchema, TreeParamsSchema };
export type { ExtraTreesParams, ForestParams, TreeParams };

function baseSettings(params: TreeParams) {
  return {
    criterion: params.criterion,
    depth: params.depth,
    minLeaf: params.min_leaf,
    minSplit: params.min_split,
    classWeight: params.class_weight,
    bins: params.bins,
  };
}

function ensembleSettings(params: ForestParams | ExtraTreesParams, randomCuts: boolean): EnsembleSettings {
  return {
    ...baseSettings(params),
    trees: params.trees,
    splitFeatures: params.split_features,
    rowSample: params.row_sample,
    bootstrap: params.bootstrap,
    randomCuts,
  };
}

/** One CART tree (Breiman et al. 1984) on all rows and all features, grown on quantile bins. */
export const treeLearner: Learner<TreeParams, TreeEnsembleModel> = {
  family: "tree",
  params: TreeParamsSchema,
  fit: (view, params, rng, context) =>
    fitTrees("tree", view, { ...baseSettings(params), trees: 1, splitFeatures: 1, rowSample: 1, bootstrap: false, randomCuts: false }, rng, context),
  predict: predictTrees,
  toJSON: treeModelToJSON,
  fromJSON: (json) => treeModelFromJSON("tree", json),
};

/** Random forest (Breiman 2001): bootstrap samples, a random share of features at each split, probabilities averaged. */
export const forestLearner: Learner<ForestParams, TreeEnsembleModel> = {
  family: "forest",
  params: ForestParamsSchema,
  fit: (view, params, rng, context) => fitTrees("forest", view, ensembleSettings(params, false), rng, context),
  predict: predictTrees,
  toJSON: treeModelToJSON,
  fromJSON: (json) => treeModelFromJSON("forest", json),
};

/** Extremely randomized trees (Geurts, Ernst & Wehenkel 2006): one random cut per candidate feature, no bootstrap by default. */
export const extraTreesLearner: Learner<ExtraTreesParams, TreeEnsembleModel> = {
  family: "extra_trees",
  params: ExtraTreesParamsSchema,
  fit: (view, params, rng, context) => fitTrees("extra_trees", view, ensembleSettings(params, true), rng, context),
  predict: predictTrees,
  toJSON: treeModelToJSON,
  fromJSON: (json) => treeModelFromJSON("extra_trees", json),
};
