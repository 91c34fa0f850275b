import { InputError } from "../errors.js";
import type { FeatureColumn } from "../frame.js";
import type { DatasetContent } from "../dataset/dataset.js";
import type { Task } from "../task.js";
import { ColumnBuilder, ColumnState } from "./column-builder.js";
import { detachField } from "./csv-records.js";
import { finishFeature, finishTarget, listNames, targetPresence } from "./infer-types.js";

/** What to read from a CSV file for training. */
export interface IngestOptions {
  /** The column to predict. */
  target: string;
  /** Columns left out entirely (identifiers, leaks). */
  ignore?: readonly string[];
  /**
   * Inferred when absent: a numeric target with more than 20 distinct values (or any
   * non-integer) is regression; otherwise 2 classes make binary, more make multiclass.
   */
  task?: Task;
  /** Columns read as categories even when their values are numbers (e.g. integer codes). */
  categorical?: readonly string[];
  /** A column kept aside as group ids (not a feature), for group k-fold. */
  group?: string;
  /** More spellings of a missing value, matched exactly after trimming (e.g. "." or "-"). */
  missing?: readonly string[];
}

/**
 * Turns parsed CSV records into columns: the header decides each column's role, then every
 * record's fields go to their column builders. A table can also re-read a chosen set of
 * columns as text (the second pass for columns whose type changed late).
 */
export class TableBuilder {
  headerFields = 0;
  lastLine = 0;
  rows = 0;
  /** Builders of the columns read, and the field index of each. */
  private builders: ColumnBuilder[] = [];
  private fieldIndex = new Int32Array(0);
  private target: ColumnBuilder | null = null;
  private group: ColumnBuilder | null = null;
  private readonly extraMissing: ReadonlySet<string> | null;

  constructor(
    readonly source: string,
    private readonly options: IngestOptions,
    /** Expected number of data rows, to size the column buffers (an estimate is fine). */
    private readonly expectedRows: number,
    /** When given, only these columns are read, as categorical text. */
    private readonly rereadOnly: ReadonlySet<string> | null = null,
  ) {
    this.extraMissing = options.missing !== undefined && options.missing.length > 0 ? new Set(options.missing) : null;
  }

  /** Takes one parsed record and the line on which it ends. */
  readonly onRecord = (record: string[], line: number): void => {
    if (this.headerFields === 0) this.readHeader(record, line);
    else {
      const builders = this.builders;
      const fieldIndex = this.fieldIndex;
      for (let c = 0; c < builders.length; c++) builders[c].add(record[fieldIndex[c]], line);
      this.rows++;
    }
    this.lastLine = line;
  };

  /** Feature columns that must be read again as text. */
  lostColumns(): string[] {
    return this.builders.filter((b) => b.state === ColumnState.Lost).map((b) => b.name);
  }

  /** Takes the re-read columns of a second pass in place of the lost ones. */
  adoptRereads(reread: TableBuilder): void {
    this.builders = this.builders.map((builder) => reread.builders.find((b) => b.name === builder.name) ?? builder);
  }

  /** The dataset without its fingerprint; frees the column buffers as it goes. */
  finish(): DatasetContent {
    if (this.headerFields === 0) throw new InputError(this.source, "the file is empty (no header line)");
    if (this.rows === 0) throw new InputError(`${this.source}:${this.lastLine}`, "the file has a header but no data rows");
    const targetBuilder = this.target!;
    const { keep, kept } = targetPresence(targetBuilder, this.rows, this.source);
    const { target, task } = finishTarget(targetBuilder, keep, this.options.task, this.source);
    let groups: Int32Array | undefined;
    if (this.group !== null) groups = this.finishGroups(this.group, keep, kept);
    const features: FeatureColumn[] = [];
    for (const builder of this.builders) {
      if (builder !== targetBuilder && builder !== this.group) features.push(finishFeature(builder, keep, kept));
    }
    return {
      source: this.source,
      task,
      features,
      target,
      ...(groups !== undefined ? { groups, groupColumn: this.group!.name } : {}),
      rowCount: kept,
      droppedRows: this.rows - kept,
    };
  }

  private readHeader(record: string[], line: number): void {
    const names = record.map((field, i) => detachField(field.trim()) || `column_${i + 1}`);
    const seen = new Map<string, number>();
    names.forEach((name, i) => {
      const earlier = seen.get(name);
      if (earlier !== undefined) {
        throw new InputError(`${this.source}:${line}`, `duplicate column name ${JSON.stringify(name)} (columns ${earlier + 1} and ${i + 1})`);
      }
      seen.set(name, i);
    });
    this.headerFields = record.length;
    const options = this.options;
    const where = `${this.source}:${line}`;
    const mustExist = (name: string, role: string): void => {
      if (!seen.has(name)) {
        throw new InputError(where, `${role} ${JSON.stringify(name)}, which is not a column of the file; the columns are ${listNames(names, 50)}`);
      }
    };
    mustExist(options.target, "the target is");
    const ignored = new Set(options.ignore ?? []);
    for (const name of ignored) mustExist(name, "ignore names");
    const categorical = new Set(options.categorical ?? []);
    for (const name of categorical) mustExist(name, "categorical names");
    if (ignored.has(options.target)) throw new InputError(where, `the target column ${JSON.stringify(options.target)} is also listed in ignore`);
    if (options.group !== undefined) {
      mustExist(options.group, "the group column is");
      if (options.group === options.target) throw new InputError(where, "the group column cannot be the target column");
      if (ignored.has(options.group)) throw new InputError(where, `the group column ${JSON.stringify(options.group)} is also listed in ignore`);
    }

    const builders: ColumnBuilder[] = [];
    const fieldIndex: number[] = [];
    names.forEach((name, i) => {
      if (ignored.has(name)) return;
      if (this.rereadOnly !== null && !this.rereadOnly.has(name)) return;
      const isTarget = name === options.target;
      const isGroup = name === options.group;
      const reading = isGroup ? "verbatim" : this.rereadOnly !== null || categorical.has(name) ? "text" : "infer";
      const builder = new ColumnBuilder(name, reading, isTarget, this.extraMissing, this.expectedRows);
      if (isTarget) this.target = builder;
      if (isGroup) this.group = builder;
      builders.push(builder);
      fieldIndex.push(i);
    });
    // A file whose only columns are the target (and group or ignored ones) would run a whole night
    // of trials that all fail; refuse it before anything starts.
    if (this.rereadOnly === null && !builders.some((b) => b !== this.target && b !== this.group)) {
      throw new InputError(where, `no feature columns are left besides the target${options.group !== undefined ? " and group" : ""}; the columns are ${listNames(names, 50)}`);
    }
    this.builders = builders;
    this.fieldIndex = Int32Array.from(fieldIndex);
  }

  private finishGroups(builder: ColumnBuilder, keep: Uint8Array | null, rowCount: number): Int32Array {
    const raw = builder.codes!.finish(keep);
    // Renumber in order of first appearance among the kept rows.
    const renumber = new Int32Array(builder.vocabulary.length).fill(-1);
    const names: string[] = [];
    for (let i = 0; i < rowCount; i++) {
      const code = raw[i];
      if (renumber[code] < 0) {
        renumber[code] = names.length;
        names.push(builder.vocabulary[code]);
      }
      raw[i] = renumber[code];
    }
    builder.release();
    if (names.length < 2) {
      throw new InputError(
        `${this.source}: column "${builder.name}"`,
        `the group column has a single group (${JSON.stringify(names[0])}); group folds need at least 2 groups`,
      );
    }
    return raw;
  }
}
