import { type Dataset, defaultMetricFor, type Task } from "@nightshift/core";

/**
 * The search space `init` and `demo` write: every family with ranges that suit most tabular
 * problems, scale parameters searched on a log scale (Bergstra & Bengio 2012).
 */
export function defaultFamiliesYaml(task: Task, rows: number): string {
  const classWeight = task === "regression" ? "" : ", class_weight: { choice: [none, balanced] }";
  const lines = [
    "families:",
    `  logistic:    { l2: { log_uniform: [1.0e-4, 10] }${classWeight} }`,
    `  tree:        { depth: { int: [2, 12] }, min_leaf: { int: [1, 50], log: true }${classWeight} }`,
    `  forest:      { trees: { int: [50, 200], log: true }, depth: { choice: [null, 8, 16] }, min_leaf: { int: [1, 20], log: true }, split_features: { uniform: [0.1, 0.7] }${classWeight} }`,
    `  extra_trees: { trees: { int: [50, 200], log: true }, depth: { choice: [null, 12] }, min_leaf: { int: [1, 20], log: true }, split_features: { uniform: [0.2, 1.0] } }`,
    `  boosted:     { rounds: { int: [50, 400], log: true }, learning_rate: { log_uniform: [0.02, 0.3] }, leaves: { int: [8, 64], log: true }, min_leaf: { int: [5, 100], log: true }, l2: { log_uniform: [1.0e-3, 10] }, row_sample: { uniform: [0.6, 1.0] }, split_features: { uniform: [0.5, 1.0] }, weight: 2 }`,
  ];
  // Brute-force neighbours cost O(rows²) per fold: leave them out of very large searches.
  if (rows <= 200_000) lines.push("  knn:         { k: { int: [3, 100], log: true }, weights: { choice: [uniform, distance] } }");
  return lines.join("\n");
}

/** The metric `init` proposes, with the reason written beside it in the plan. */
export function proposedMetric(dataset: Dataset): { metric: string; why: string } {
  const { name, reason } = defaultMetricFor(dataset.task, dataset.target);
  return { metric: name, why: reason };
}
