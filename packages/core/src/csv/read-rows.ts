import { InputError } from "../errors.js";
import type { FeatureColumn } from "../frame.js";
import { MISSING_CODE } from "../frame.js";
import type { ColumnSchema } from "../dataset/dataset.js";
import { GrowableArray } from "./growable-array.js";
import { isMissingSpelling, parseBooleanField, parseNumericField, trimField } from "./field-values.js";
import { listNames } from "./infer-types.js";
import { parseRecords, streamRecords } from "./csv-records.js";
import { countLineEnds, inspectFile } from "./read-csv.js";
import { sniffDialect } from "./sniff-delimiter.js";

/** New rows read for prediction, coded the way the training rows were. */
export interface PredictionRows {
  columns: FeatureColumn[];
  rowCount: number;
  /** Per categorical column, how many values were categories never seen in training (coded missing). */
  unseen: Record<string, number>;
}

export interface ReadRowsOptions {
  /** The extra missing-value spellings used at training (IngestOptions.missing). */
  missing?: readonly string[];
}

/**
 * Reads new rows for prediction with the training schema: each schema column must be in the
 * header (extra columns, the target among them, are ignored); numeric and boolean values
 * must read as they did in training; a category not in the training vocabulary becomes
 * missing and is counted in `unseen`.
 */
export async function readCsvRows(path: string, schema: readonly ColumnSchema[], options: ReadRowsOptions = {}): Promise<PredictionRows> {
  const { dialect, expectedRows } = await inspectFile(path);
  const reader = new RowsReader(path, schema, options, expectedRows);
  await streamRecords(path, dialect, reader.onRecord);
  return reader.finish();
}

/** The same as readCsvRows, for CSV text already in memory. */
export function parseCsvRows(text: string, source: string, schema: readonly ColumnSchema[], options: ReadRowsOptions = {}): PredictionRows {
  if (text.length === 0) throw new InputError(source, "the file is empty");
  const reader = new RowsReader(source, schema, options, countLineEnds(text));
  parseRecords(text, source, sniffDialect(text), reader.onRecord);
  return reader.finish();
}

const NUMERIC = 0;
const BOOLEAN = 1;
const CATEGORICAL = 2;

class RowsReader {
  headerFields = 0;
  lastLine = 0;
  rows = 0;
  private readonly kinds: Uint8Array;
  private readonly fieldIndex: Int32Array;
  private readonly numbers: (GrowableArray<Float32Array> | null)[];
  private readonly codes: (GrowableArray<Int32Array> | null)[];
  private readonly dictionaries: (Map<string, number> | null)[];
  private readonly unseen: Int32Array;
  private readonly extraMissing: ReadonlySet<string> | null;

  constructor(
    private readonly source: string,
    private readonly schema: readonly ColumnSchema[],
    options: ReadRowsOptions,
    expectedRows: number,
  ) {
    this.kinds = Uint8Array.from(schema, (column) => (column.kind === "numeric" ? NUMERIC : column.kind === "boolean" ? BOOLEAN : CATEGORICAL));
    this.fieldIndex = new Int32Array(schema.length);
    this.numbers = schema.map((column) => (column.kind === "categorical" ? null : new GrowableArray((n) => new Float32Array(n), expectedRows)));
    this.codes = schema.map((column) => (column.kind === "categorical" ? new GrowableArray((n) => new Int32Array(n), expectedRows) : null));
    this.dictionaries = schema.map((column) =>
      column.kind === "categorical" ? new Map((column.vocabulary ?? []).map((category, code) => [category, code])) : null,
    );
    this.unseen = new Int32Array(schema.length);
    this.extraMissing = options.missing !== undefined && options.missing.length > 0 ? new Set(options.missing) : null;
  }

  readonly onRecord = (record: string[], line: number): void => {
    if (this.headerFields === 0) this.readHeader(record, line);
    else {
      for (let c = 0; c < this.kinds.length; c++) this.add(c, record[this.fieldIndex[c]], line);
      this.rows++;
    }
    this.lastLine = line;
  };

  finish(): PredictionRows {
    if (this.headerFields === 0) throw new InputError(this.source, "the file is empty (no header line)");
    const rowCount = this.rows;
    const unseen: Record<string, number> = {};
    const columns = this.schema.map((column, c): FeatureColumn => {
      if (column.kind === "categorical") {
        const codes = this.codes[c]!.finish(null);
        unseen[column.name] = this.unseen[c];
        return { name: column.name, kind: "categorical", codes, vocabulary: column.vocabulary ?? [] };
      }
      const values = this.numbers[c]!.finish(null);
      return { name: column.name, kind: column.kind, values };
    });
    return { columns, rowCount, unseen };
  }

  private add(c: number, field: string, line: number): void {
    const text = trimField(field);
    const missing = isMissingSpelling(text) || (this.extraMissing !== null && this.extraMissing.has(text));
    const kind = this.kinds[c];
    if (kind === CATEGORICAL) {
      if (missing) this.codes[c]!.push(MISSING_CODE);
      else {
        const code = this.dictionaries[c]!.get(text);
        if (code === undefined) this.unseen[c]++;
        this.codes[c]!.push(code ?? MISSING_CODE);
      }
      return;
    }
    if (missing) {
      this.numbers[c]!.push(NaN);
      return;
    }
    const value = kind === NUMERIC ? parseNumericField(text) : parseBooleanField(text);
    if (value !== value) {
      const expected = kind === NUMERIC ? "a number" : "true/false or yes/no";
      throw new InputError(`${this.source}:${line}: column "${this.schema[c].name}"`, `expected ${expected} as in training, found ${JSON.stringify(text)}`);
    }
    this.numbers[c]!.push(value);
  }

  private readHeader(record: string[], line: number): void {
    const names = record.map((field, i) => field.trim() || `column_${i + 1}`);
    const position = new Map<string, number>();
    names.forEach((name, i) => {
      if (!position.has(name)) position.set(name, i);
    });
    const absent = this.schema.filter((column) => !position.has(column.name)).map((column) => column.name);
    if (absent.length > 0) {
      throw new InputError(
        `${this.source}:${line}`,
        `the model needs ${absent.length === 1 ? "column" : "columns"} ${listNames(absent)}, missing from the file; its columns are ${listNames(names, 50)}`,
      );
    }
    this.schema.forEach((column, c) => (this.fieldIndex[c] = position.get(column.name)!));
    this.headerFields = record.length;
  }
}
