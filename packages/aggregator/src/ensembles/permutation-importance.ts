import { type FeatureColumn, type Metric, type Rng } from "@nightshift/core";

export interface FeatureImportance {
  readonly name: string;
  /** Mean drop in quality over the repeats (positive: the predictor relies on the feature). */
  readonly mean: number;
  /** Standard deviation of the drop over the repeats (population form, as scikit-learn's). */
  readonly std: number;
  readonly drops: Float64Array;
}

export interface PermutationImportance {
  readonly baseline: number;
  readonly features: FeatureImportance[];
}

/**
 * Permutation importance (Breiman, "Random Forests", 2001; Fisher, Rudin & Dominici, JMLR
 * 20(177), 2019; METHODS.md §10, scikit-learn's `permutation_importance` definition): the
 * score s on the rows, then for each feature j and repeat k the score s_kj with column j's
 * values shuffled across rows (breaking its link with the target and the other columns);
 * importance_j = mean over k of the drop s − s_kj (s_kj − s for a loss), with its spread.
 * It describes what this predictor relies on, not causes; correlated features share credit.
 *
 * `predict` returns full-width predictions for columns in the given order.
 */
export function permutationImportance(input: {
  readonly columns: readonly FeatureColumn[];
  readonly target: Int32Array | Float64Array;
  readonly metric: Metric;
  readonly width: number;
  readonly predict: (columns: readonly FeatureColumn[]) => Float64Array;
  readonly repeats: number;
  readonly rng: Rng;
}): PermutationImportance {
  const { columns, target, metric, width, predict, repeats, rng } = input;
  if (!Number.isInteger(repeats) || repeats < 1) throw new RangeError(`repeats must be a positive integer, got ${repeats}`);
  const rows = target.length;
  const baseline = metric.score(target, predict(columns), width);
  const permutation = new Uint32Array(rows);
  const features = columns.map((column, j): FeatureImportance => {
    const drops = new Float64Array(repeats);
    for (let k = 0; k < repeats; k++) {
      for (let i = 0; i < rows; i++) permutation[i] = i;
      for (let i = rows - 1; i > 0; i--) {
        const r = rng.int(i + 1);
        const t = permutation[i];
        permutation[i] = permutation[r];
        permutation[r] = t;
      }
      const shuffled = columns.map((c, i) => (i === j ? permuted(c, permutation) : c));
      const score = metric.score(target, predict(shuffled), width);
      drops[k] = metric.direction === "max" ? baseline - score : score - baseline;
    }
    let mean = 0;
    for (const d of drops) mean += d;
    mean /= repeats;
    let squares = 0;
    for (const d of drops) squares += (d - mean) ** 2;
    return { name: column.name, mean, std: Math.sqrt(squares / repeats), drops };
  });
  return { baseline, features };
}

function permuted(column: FeatureColumn, permutation: Uint32Array): FeatureColumn {
  if (column.kind === "categorical") {
    const codes = new Int32Array(permutation.length);
    for (let i = 0; i < permutation.length; i++) codes[i] = column.codes[permutation[i]];
    return { ...column, codes };
  }
  const values = new (column.values.constructor as new (n: number) => Float32Array | Float64Array)(permutation.length);
  for (let i = 0; i < permutation.length; i++) values[i] = column.values[permutation[i]];
  return { ...column, values };
}
