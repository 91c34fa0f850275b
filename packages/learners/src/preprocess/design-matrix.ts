import { MISSING_CODE, type FeatureColumn, type TableView } from "@nightshift/core";
import { z } from "zod";
import type { FitContext } from "../learner.js";

/**
 * The numeric design matrix shared by the linear family and k nearest neighbours, fitted on the
 * training rows of a fold only (no leakage: the rows to predict never move a mean or a scale).
 *
 * - A numeric (or boolean) column becomes (x - mean) / std with the mean and population standard
 *   deviation of its present training values (as scikit-learn's StandardScaler). A missing value
 *   (NaN, or a non-finite number) is imputed with the training mean, i.e. 0 after standardising.
 *   When `missingIndicators` is set and some but not all training values were missing, a 0/1
 *   column "missing" follows the value column, so a model can tell an imputed mean from a real one.
 * - A categorical column becomes one 0/1 column per category seen in the training rows; a missing
 *   or unseen category is all zeros. Categories are matched by their text, so rows from another
 *   frame with a different code order are encoded the same way.
 * - Every design column that is constant over the training rows is dropped (a constant numeric
 *   value, an indicator that is always 0 or always 1, a category present in every row); it cannot
 *   change a linear model beyond its intercept, nor any distance between training rows.
 *
 * The 0/1 columns are not rescaled. For distances that keeps them on the footing of a standardised
 * numeric feature: a category mismatch adds 2 to the squared distance, the same as the expected
 * squared difference of two independent rows on one standardised feature.
 */
export const NumericEncodingSchema = z
  .object({
    kind: z.literal("numeric"),
    name: z.string(),
    mean: z.number(),
    std: z.number().nonnegative(),
    /** Whether the standardised value is a design column (false for a constant or all-missing column). */
    value: z.boolean(),
    /** Whether a 0/1 missing-value column follows. */
    indicator: z.boolean(),
  })
  .strict();

export const CategoricalEncodingSchema = z
  .object({
    kind: z.literal("categorical"),
    name: z.string(),
    /** One 0/1 design column per category, in this order. */
    categories: z.array(z.string()),
  })
  .strict();

export const ColumnEncodingSchema = z.discriminatedUnion("kind", [NumericEncodingSchema, CategoricalEncodingSchema]);

export const DesignEncodingSchema = z
  .object({
    /** One entry per feature column of the training view, in the view's order. */
    columns: z.array(ColumnEncodingSchema),
    /** Number of design columns. */
    width: z.number().int().nonnegative(),
    /** Name of each design column, e.g. "age", "age missing", "site=north". */
    names: z.array(z.string()),
  })
  .strict();

export type NumericEncoding = z.infer<typeof NumericEncodingSchema>;
export type CategoricalEncoding = z.infer<typeof CategoricalEncodingSchema>;
export type ColumnEncoding = z.infer<typeof ColumnEncodingSchema>;
export type DesignEncoding = z.infer<typeof DesignEncodingSchema>;

export interface DesignOptions {
  readonly missingIndicators: boolean;
}

export function fitDesign(view: TableView, options: DesignOptions): DesignEncoding {
  const names: string[] = [];
  const columns = view.columns.map((column): ColumnEncoding => {
    if (column.kind === "categorical") {
      const encoding = fitCategorical(column.name, column.codes, column.vocabulary, view.rows);
      for (const category of encoding.categories) names.push(`${column.name}=${category}`);
      return encoding;
    }
    const encoding = fitNumeric(column.name, column.values, view.rows, options.missingIndicators);
    if (encoding.value) names.push(column.name);
    if (encoding.indicator) names.push(`${column.name} missing`);
    return encoding;
  });
  return { columns, width: names.length, names };
}

function fitNumeric(name: string, values: Float32Array | Float64Array, rows: Uint32Array, missingIndicators: boolean): NumericEncoding {
  let present = 0;
  let sum = 0;
  let min = Infinity;
  let max = -Infinity;
  for (let i = 0; i < rows.length; i++) {
    const v = values[rows[i]];
    // v - v is 0 exactly for finite v (NaN for NaN and ±Infinity); cheaper than Number.isFinite here.
    if (v - v !== 0) continue;
    present++;
    sum += v;
    min = v < min ? v : min;
    max = v > max ? v : max;
  }
  const mean = present > 0 ? sum / present : 0;
  let squares = 0;
  for (let i = 0; i < rows.length; i++) {
    const v = values[rows[i]];
    if (v - v === 0) squares += (v - mean) * (v - mean);
  }
  const varies = present > 0 && min < max;
  const std = varies ? Math.sqrt(squares / present) : 0;
  const someMissing = present > 0 && present < rows.length;
  return { kind: "numeric", name, mean, std, value: varies && std > 0, indicator: missingIndicators && someMissing };
}

function fitCategorical(name: string, codes: Int32Array, vocabulary: readonly string[], rows: Uint32Array): CategoricalEncoding {
  const counts = new Float64Array(vocabulary.length);
  for (let i = 0; i < rows.length; i++) {
    const code = codes[rows[i]];
    if (code !== MISSING_CODE && code >= 0 && code < vocabulary.length) counts[code]++;
  }
  const categories: string[] = [];
  for (let code = 0; code < vocabulary.length; code++) if (counts[code] > 0 && counts[code] < rows.length) categories.push(vocabulary[code]);
  return { kind: "categorical", name, categories };
}

/** How one feature column fills its design columns, resolved once per call. */
type ColumnWriter =
  | { readonly kind: "numeric"; readonly values: Float32Array | Float64Array; readonly mean: number; readonly std: number; readonly value: boolean; readonly indicator: boolean; readonly offset: number }
  | { readonly kind: "categorical"; readonly codes: Int32Array; readonly slotOfCode: Int32Array; readonly offset: number };

/** Rows filled together, so one block of the row-major output stays in cache while every column writes to it. */
const ROW_BLOCK = 256;

/**
 * Row-major design matrix (rows of the view × `encoding.width`) of any rows, with the training
 * statistics. With `into`, the rows are written there `stride` doubles apart (stride ≥ width;
 * the padding is left as it is) and `into` is returned.
 */
export function designMatrix(encoding: DesignEncoding, view: TableView, into?: { readonly out: Float64Array; readonly stride: number }): Float64Array {
  if (view.columns.length !== encoding.columns.length)
    throw new TypeError(`design: fitted on ${encoding.columns.length} feature columns, given ${view.columns.length}`);
  const writers: ColumnWriter[] = [];
  let offset = 0;
  encoding.columns.forEach((fitted, f) => {
    const column = view.columns[f];
    checkColumn(fitted, column);
    if (fitted.kind === "numeric" && column.kind !== "categorical") {
      writers.push({ kind: "numeric", values: column.values, mean: fitted.mean, std: fitted.std, value: fitted.value, indicator: fitted.indicator, offset });
      offset += (fitted.value ? 1 : 0) + (fitted.indicator ? 1 : 0);
    } else if (fitted.kind === "categorical" && column.kind === "categorical") {
      const slotOfCategory = new Map(fitted.categories.map((category, slot) => [category, slot]));
      const slotOfCode = Int32Array.from(column.vocabulary, (category) => slotOfCategory.get(category) ?? -1);
      writers.push({ kind: "categorical", codes: column.codes, slotOfCode, offset });
      offset += fitted.categories.length;
    }
  });
  const n = view.rows.length;
  const width = into?.stride ?? encoding.width;
  if (width < encoding.width) throw new RangeError(`design: stride ${width} is narrower than the ${encoding.width} design columns`);
  const x = into?.out ?? new Float64Array(n * width);
  if (x.length < n * width) throw new RangeError(`design: output holds ${x.length} values, ${n * width} needed`);
  for (let start = 0; start < n; start += ROW_BLOCK) {
    const end = Math.min(n, start + ROW_BLOCK);
    for (const writer of writers) {
      if (writer.kind === "numeric") writeNumeric(writer, view.rows, start, end, x, width);
      else writeCategorical(writer, view.rows, start, end, x, width);
    }
  }
  return x;
}

function writeNumeric(
  writer: Extract<ColumnWriter, { kind: "numeric" }>,
  rows: Uint32Array,
  start: number,
  end: number,
  x: Float64Array,
  width: number,
): void {
  const { values, mean, std, offset } = writer;
  let at = start * width + offset;
  if (writer.value && writer.indicator) {
    for (let r = start; r < end; r++, at += width) {
      const v = values[rows[r]];
      const present = v - v === 0;
      x[at] = present ? (v - mean) / std : 0;
      x[at + 1] = present ? 0 : 1;
    }
  } else if (writer.value) {
    for (let r = start; r < end; r++, at += width) {
      const v = values[rows[r]];
      x[at] = v - v === 0 ? (v - mean) / std : 0;
    }
  } else if (writer.indicator) {
    for (let r = start; r < end; r++, at += width) {
      const v = values[rows[r]];
      x[at] = v - v === 0 ? 0 : 1;
    }
  }
}

function writeCategorical(
  writer: Extract<ColumnWriter, { kind: "categorical" }>,
  rows: Uint32Array,
  start: number,
  end: number,
  x: Float64Array,
  width: number,
): void {
  const { codes, slotOfCode, offset } = writer;
  let at = start * width + offset;
  for (let r = start; r < end; r++, at += width) {
    const code = codes[rows[r]];
    const slot = code >= 0 && code < slotOfCode.length ? slotOfCode[code] : -1;
    if (slot >= 0) x[at + slot] = 1;
  }
}

function checkColumn(fitted: ColumnEncoding, column: FeatureColumn): void {
  if (fitted.name !== column.name) throw new TypeError(`design: expected feature column "${fitted.name}", given "${column.name}"`);
  if ((fitted.kind === "categorical") !== (column.kind === "categorical"))
    throw new TypeError(`design: feature column "${column.name}" was ${fitted.kind} in training, given ${column.kind}`);
}

/**
 * The design encoding (standardisation, imputation, one-hot categories) of a fit's training
 * rows, reused across fits on the same rows (same fold) when the runner offers a memo: it
 * depends on those rows and the indicator option only. Callers must not modify it.
 */
export function trainingDesign(view: TableView, options: DesignOptions, context?: FitContext): DesignEncoding {
  if (!context) return fitDesign(view, options);
  const key = `${context.key}:design:${options.missingIndicators}:${view.rows.length}`;
  let encoding = context.memo.get(key) as DesignEncoding | undefined;
  if (!encoding) {
    encoding = fitDesign(view, options);
    context.memo.set(key, encoding);
  }
  return encoding;
}
