import type { FeatureColumn, Target } from "../frame.js";
import type { Dataset, DatasetContent } from "./dataset.js";
import { fingerprintContent } from "./fingerprint.js";

function pick<T extends Float32Array | Float64Array | Int32Array>(values: T, rows: Uint32Array): T {
  const out = new (values.constructor as new (n: number) => T)(rows.length);
  for (let i = 0; i < rows.length; i++) out[i] = values[rows[i]];
  return out;
}

/**
 * A new dataset holding only `rows` (copied, in the given order), with vocabularies and class
 * labels kept whole so codes mean the same in both. Used to cut the training part that
 * workers receive: the hold-out rows stay with the coordinator until the final step.
 */
export function subsetDataset(dataset: Dataset, rows: Uint32Array): Dataset {
  const features: FeatureColumn[] = dataset.features.map((column) =>
    column.kind === "categorical" ? { ...column, codes: pick(column.codes, rows) } : { ...column, values: pick(column.values, rows) },
  );
  const target: Target = dataset.target.kind === "classes" ? { ...dataset.target, codes: pick(dataset.target.codes, rows) } : { ...dataset.target, values: pick(dataset.target.values, rows) };
  const content: DatasetContent = {
    source: dataset.source,
    task: dataset.task,
    features,
    target,
    ...(dataset.groups ? { groups: pick(dataset.groups, rows), groupColumn: dataset.groupColumn } : {}),
    rowCount: rows.length,
    droppedRows: 0,
  };
  return { ...content, fingerprint: fingerprintContent(content) };
}
