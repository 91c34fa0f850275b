import { InputError } from "../errors.js";
import type { ClassTarget, FeatureColumn, Target, ValueTarget } from "../frame.js";
import { MISSING_CODE } from "../frame.js";
import type { Task } from "../task.js";
import { ColumnBuilder, ColumnState } from "./column-builder.js";
import { parseBooleanField, parseNumericField } from "./field-values.js";

/**
 * Type and task decisions made when the file has been read.
 *
 * Strategy (one pass, see column-builder.ts): every inferred column is parsed as numbers
 * until its first non-numeric value, remembering the first spelling of up to a thousand
 * distinct numbers so it can turn categorical without re-reading; a text column whose
 * values are all true/false/yes/no is boolean. A column that turns categorical after more
 * distinct numbers than that is re-read as text in a second pass over the file.
 */

/** A numeric target with more distinct values than this (or any non-integer) is a regression target. */
export const MAX_INTEGER_CLASSES = 20;

/**
 * Rows whose target is present, as a 0/1 mask (null when none is missing), and their count.
 * Rows with a missing target are dropped; a target with no value at all is an error.
 */
export function targetPresence(target: ColumnBuilder, rowCount: number, source: string): { keep: Uint8Array | null; kept: number } {
  if (target.state === ColumnState.Empty) {
    throw new InputError(`${source}: column "${target.name}"`, `all ${rowCount} values of the target are missing`);
  }
  const keep = new Uint8Array(rowCount);
  let kept = 0;
  if (target.state === ColumnState.Numeric) {
    const numbers = target.numbers!;
    for (let row = 0; row < rowCount; row++) if (numbers.at(row) === numbers.at(row)) keep[row] = 1;
  } else {
    const codes = target.codes!;
    for (let row = 0; row < rowCount; row++) if (codes.at(row) !== MISSING_CODE) keep[row] = 1;
  }
  for (let row = 0; row < rowCount; row++) kept += keep[row];
  return { keep: kept === rowCount ? null : keep, kept };
}

/** The final feature column; frees the builder's buffers. */
export function finishFeature(builder: ColumnBuilder, keep: Uint8Array | null, rowCount: number): FeatureColumn {
  const name = builder.name;
  let column: FeatureColumn;
  if (builder.state === ColumnState.Empty) {
    column = { name, kind: "numeric", values: new Float32Array(rowCount).fill(NaN) };
  } else if (builder.state === ColumnState.Numeric) {
    column = { name, kind: "numeric", values: builder.numbers!.finish(keep) };
  } else if (builder.state === ColumnState.Text) {
    const codes = builder.codes!.finish(keep);
    const truth = builder.reading === "infer" ? booleanVocabulary(builder.vocabulary) : null;
    if (truth !== null) {
      const values = new Float32Array(rowCount);
      for (let i = 0; i < rowCount; i++) values[i] = codes[i] === MISSING_CODE ? NaN : truth[codes[i]];
      column = { name, kind: "boolean", values };
    } else {
      const vocabulary = keep === null ? builder.vocabulary : dropUnusedCategories(codes, builder.vocabulary);
      column = { name, kind: "categorical", codes, vocabulary };
    }
  } else {
    throw new Error(`column "${name}" must be re-read before it is finished`);
  }
  builder.release();
  return column;
}

/**
 * After rows were dropped, categories seen only in those rows are removed and the codes
 * renumbered (first-appearance order is kept).
 */
function dropUnusedCategories(codes: Int32Array, vocabulary: readonly string[]): string[] {
  const used = new Uint8Array(vocabulary.length);
  for (let i = 0; i < codes.length; i++) if (codes[i] !== MISSING_CODE) used[codes[i]] = 1;
  const renumber = new Int32Array(vocabulary.length);
  const kept: string[] = [];
  vocabulary.forEach((category, code) => {
    renumber[code] = used[code] === 1 ? kept.push(category) - 1 : MISSING_CODE;
  });
  if (kept.length === vocabulary.length) return kept;
  for (let i = 0; i < codes.length; i++) if (codes[i] !== MISSING_CODE) codes[i] = renumber[codes[i]];
  return kept;
}

/** 0/1 per vocabulary entry when every entry is a boolean word, else null. */
function booleanVocabulary(vocabulary: readonly string[]): Float32Array | null {
  if (vocabulary.length === 0) return null;
  const truth = new Float32Array(vocabulary.length);
  for (let i = 0; i < vocabulary.length; i++) {
    const value = parseBooleanField(vocabulary[i]);
    if (value !== value) return null;
    truth[i] = value;
  }
  return truth;
}

/**
 * The target and the task: the given task, or inferred (a numeric target with more than
 * MAX_INTEGER_CLASSES distinct values or any non-integer is regression; otherwise two
 * classes make a binary task and more a multiclass one). Class labels are sorted
 * numerically when all are numbers, else as strings (by UTF-16 code units, the same on
 * every machine); codes index the sorted labels.
 */
export function finishTarget(
  builder: ColumnBuilder,
  keep: Uint8Array | null,
  task: Task | undefined,
  source: string,
): { target: Target; task: Task } {
  const where = `${source}: column "${builder.name}"`;
  let result: { target: Target; task: Task };
  if (builder.state === ColumnState.Numeric) {
    const values = builder.numbers!.finish(keep) as Float64Array;
    const looksContinuous = !builder.allIntegers || builder.distinctNumbers > MAX_INTEGER_CLASSES;
    if (task === "regression" || (task === undefined && looksContinuous)) {
      const target: ValueTarget = { name: builder.name, kind: "values", values };
      result = { target, task: "regression" };
    } else {
      result = classesFromNumbers(builder, values, task, where);
    }
  } else {
    if (task === "regression") {
      const first = builder.firstText;
      if (first === null) throw new InputError(where, "the target is listed as categorical, so it cannot be a regression target");
      throw new InputError(
        `${source}:${first.line}: column "${builder.name}"`,
        `the target of a regression must be numeric, found ${JSON.stringify(first.value)}`,
      );
    }
    result = classesFromText(builder, builder.codes!.finish(keep), task, where);
  }
  builder.release();
  return result;
}

function classesFromNumbers(
  builder: ColumnBuilder,
  values: Float64Array,
  task: Task | undefined,
  where: string,
): { target: Target; task: Task } {
  const distinct = builder.spellings !== null ? [...builder.spellings.keys()] : [...new Set(values)];
  distinct.sort((a, b) => a - b);
  const codeOf = new Map<number, number>();
  distinct.forEach((value, code) => codeOf.set(value, code));
  const labels = distinct.map((value) => builder.spellings?.get(value) ?? String(value));
  const codes = new Int32Array(values.length);
  for (let i = 0; i < values.length; i++) codes[i] = codeOf.get(values[i])!;
  return classTask({ name: builder.name, kind: "classes", codes, labels }, task, where);
}

function classesFromText(
  builder: ColumnBuilder,
  codes: Int32Array,
  task: Task | undefined,
  where: string,
): { target: Target; task: Task } {
  const vocabulary = builder.vocabulary;
  const numbers = vocabulary.map(parseNumericField);
  const numeric = numbers.every((value) => value === value);
  const order = vocabulary.map((_, code) => code);
  order.sort(numeric ? (a, b) => numbers[a] - numbers[b] : (a, b) => (vocabulary[a] < vocabulary[b] ? -1 : vocabulary[a] > vocabulary[b] ? 1 : 0));
  const sortedCode = new Int32Array(vocabulary.length);
  order.forEach((code, position) => (sortedCode[code] = position));
  for (let i = 0; i < codes.length; i++) codes[i] = sortedCode[codes[i]];
  const labels = order.map((code) => vocabulary[code]);
  return classTask({ name: builder.name, kind: "classes", codes, labels }, task, where);
}

function classTask(target: ClassTarget, task: Task | undefined, where: string): { target: Target; task: Task } {
  const classes = target.labels.length;
  if (classes < 2) {
    throw new InputError(where, `the target has a single class (${JSON.stringify(target.labels[0])}); there is nothing to predict`);
  }
  if (task === "binary" && classes !== 2) {
    throw new InputError(where, `the task is binary but the target has ${classes} classes (${listNames(target.labels)}); use multiclass`);
  }
  return { target, task: task ?? (classes === 2 ? "binary" : "multiclass") };
}

/** A list of names for a message, shortened after `limit` entries. */
export function listNames(names: readonly string[], limit = 12): string {
  const shown = names.slice(0, limit).map((name) => JSON.stringify(name));
  return names.length > limit ? `${shown.join(", ")} and ${names.length - limit} more` : shown.join(", ");
}
