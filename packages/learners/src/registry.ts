import type { FamilyName, Rng, TableView, TrainView } from "@nightshift/core";
import { boostedLearner } from "./boosted/index.js";
import { knnLearner } from "./knn/index.js";
import type { FitContext, Learner, ModelJson } from "./learner.js";
import { logisticLearner } from "./linear/index.js";
import { parseParams } from "./params.js";
import { extraTreesLearner, forestLearner, treeLearner } from "./trees/index.js";

/** A family's learner with its types erased, as the runner uses it: parameters come from a job. */
export interface RegisteredLearner {
  readonly family: FamilyName;
  /** Validates raw parameters (unknown keys are errors) and fills defaults; throws ParamError. */
  parseParams(raw: unknown): unknown;
  fit(view: TrainView, params: unknown, rng: Rng, context?: FitContext): unknown;
  predict(model: unknown, view: TableView): Float64Array;
  toJSON(model: unknown): ModelJson;
  fromJSON(json: ModelJson): unknown;
}

function register<P, M>(learner: Learner<P, M>): RegisteredLearner {
  return {
    family: learner.family,
    parseParams: (raw) => parseParams(learner.family, learner.params, raw),
    fit: (view, params, rng, context) => learner.fit(view, params as P, rng, context),
    predict: (model, view) => learner.predict(model as M, view),
    toJSON: (model) => learner.toJSON(model as M),
    fromJSON: (json) => learner.fromJSON(json),
  };
}

const LEARNERS: Readonly<Record<FamilyName, RegisteredLearner>> = {
  logistic: register(logisticLearner),
  tree: register(treeLearner),
  forest: register(forestLearner),
  extra_trees: register(extraTreesLearner),
  boosted: register(boostedLearner),
  knn: register(knnLearner),
};

/** The learner of a family. Families are a closed list (workers run data, not code). */
export function learnerFor(family: FamilyName): RegisteredLearner {
  const learner = LEARNERS[family];
  if (!learner) throw new RangeError(`unknown family '${String(family)}'`);
  return learner;
}
