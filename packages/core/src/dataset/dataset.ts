import { z } from "zod";
import type { FeatureColumn, Target, TrainView } from "../frame.js";
import type { Task } from "../task.js";

/** A training table in typed columns, as read from a CSV file or unpacked from a dataset pack. */
export interface Dataset {
  /** The file the rows came from, for messages. */
  readonly source: string;
  readonly task: Task;
  readonly features: readonly FeatureColumn[];
  readonly target: Target;
  /** Group id per row (codes in order of first appearance) when a group column was given. */
  readonly groups?: Int32Array;
  /** The column the group ids came from. */
  readonly groupColumn?: string;
  readonly rowCount: number;
  /** Rows left out because their target was missing. */
  readonly droppedRows: number;
  /** sha256 (hex) of the dataset pack's content: same rows, columns and types give the same fingerprint. */
  readonly fingerprint: string;
}

/** A dataset before its fingerprint is computed. */
export type DatasetContent = Omit<Dataset, "fingerprint">;

/** The rows `rows` of a dataset with its target, without copying, for fitting a learner. */
export function trainView(dataset: Dataset, rows: Uint32Array): TrainView {
  return { columns: dataset.features, rows, task: dataset.task, target: dataset.target };
}

/**
 * What a model needs to read new rows the way its training rows were read: each feature
 * column's name and kind, and the category list of categorical columns (new rows are coded
 * against it).
 */
export const ColumnSchemaSchema = z.object({
  name: z.string().min(1),
  kind: z.enum(["numeric", "boolean", "categorical"]),
  vocabulary: z.array(z.string()).optional(),
});
export type ColumnSchema = z.infer<typeof ColumnSchemaSchema>;

export function datasetSchema(dataset: Pick<Dataset, "features">): ColumnSchema[] {
  return dataset.features.map((column) =>
    column.kind === "categorical"
      ? { name: column.name, kind: column.kind, vocabulary: [...column.vocabulary] }
      : { name: column.name, kind: column.kind },
  );
}
