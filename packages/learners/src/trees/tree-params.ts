import { z } from "zod";

const integerAtLeast = (min: number, nullable: boolean) => {
  const error = `must be an integer >= ${min}${nullable ? " or null" : ""}`;
  return z.number({ error }).int({ error }).min(min, { error });
};
const integerIn = (min: number, max: number) => {
  const error = `must be an integer in ${min}..${max}`;
  return z.number({ error }).int({ error }).min(min, { error }).max(max, { error });
};
const fraction = (nullable: boolean) => {
  const error = `must be a number in (0, 1]${nullable ? " or null" : ""}`;
  return z.number({ error }).gt(0, { error }).lte(1, { error });
};
const oneOf = <const T extends readonly [string, ...string[]]>(values: T) => z.enum(values, { error: `must be one of ${values.join(", ")}` });
const flag = () => z.boolean({ error: "must be true or false" });

/** Parameters every tree family shares. */
const treeShape = {
  /** Split criterion for classification; regression always uses squared error. */
  criterion: oneOf(["gini", "entropy"]).default("gini"),
  /** Largest number of splits from the root to a leaf; null grows until leaves are pure or too small. */
  depth: integerAtLeast(1, true).nullable().default(null),
  /** Fewest training rows in a leaf. */
  min_leaf: integerAtLeast(1, false).default(1),
  /** Fewest training rows in a node that may still be split. */
  min_split: integerAtLeast(2, false).default(2),
  /** `balanced` weighs class c by n / (C · n_c) (King & Zeng 2001, as in METHODS.md §9). */
  class_weight: oneOf(["none", "balanced"]).default("none"),
  /** Quantile bins per numeric feature (the missing bin comes on top). */
  bins: integerIn(2, 255).default(255),
};

const ensembleShape = (bootstrap: boolean) => ({
  ...treeShape,
  trees: integerIn(1, 5000).default(100),
  /**
   * Share of the features tried at each split; null = the task's default, √p/p for
   * classification and 1 (all) for regression (METHODS.md §7).
   */
  split_features: fraction(true).nullable().default(null),
  /** Rows drawn per tree as a share of the training rows (with replacement when bootstrapping). */
  row_sample: fraction(false).default(1),
  bootstrap: flag().default(bootstrap),
});

export const TreeParamsSchema = z.object(treeShape).strict();
export const ForestParamsSchema = z.object(ensembleShape(true)).strict();
export const ExtraTreesParamsSchema = z.object(ensembleShape(false)).strict();

export type TreeParams = z.infer<typeof TreeParamsSchema>;
export type ForestParams = z.infer<typeof ForestParamsSchema>;
export type ExtraTreesParams = z.infer<typeof ExtraTreesParamsSchema>;
