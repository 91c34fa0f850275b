import { MISSING_CODE } from "../frame.js";
import { GrowableArray } from "./growable-array.js";
import { detachField } from "./csv-records.js";
import { isMissingSpelling, parseNumericField, trimField } from "./field-values.js";

/**
 * How a column's fields are read:
 * - `infer`: numeric while every non-missing value is a number, otherwise text
 *   (categorical or boolean, decided when the file ends);
 * - `text`: categorical strings (a column the user listed as categorical);
 * - `verbatim`: every field is an identifier as written, nothing is missing (group ids).
 */
export type ColumnReading = "infer" | "text" | "verbatim";

/** The column's current type while streaming. */
export const enum ColumnState {
  /** Only missing values so far. */
  Empty = 0,
  Numeric = 1,
  Text = 2,
  /**
   * A text value came after more distinct numbers than we remember spellings for; the
   * column must be read again as text (a second pass over the file, for this column only).
   */
  Lost = 3,
}

/**
 * Distinct numbers whose first spelling a numeric column remembers. If a text value comes
 * later, the column turns categorical and earlier rows get their categories from these
 * spellings; beyond this many, the column is re-read instead (rare: a numeric column with
 * over a thousand distinct values and then a word is almost always a dirty numeric column).
 */
export const SPELLING_MEMORY = 1000;

/** Where a column's first non-numeric value was seen, for messages. */
export interface FirstText {
  readonly line: number;
  readonly value: string;
}

/**
 * One column of a CSV file being ingested, converted field by field into a typed buffer
 * (one pass, no strings kept per row). Numbers are stored optimistically; `wide` columns
 * (the target) keep float64, features float32 (see dataset/pack.ts for why float32 is enough).
 */
export class ColumnBuilder {
  state: ColumnState = ColumnState.Empty;
  numbers: GrowableArray<Float32Array | Float64Array> | null = null;
  codes: GrowableArray<Int32Array> | null = null;
  /** Category string of each code, in order of first appearance. */
  readonly vocabulary: string[] = [];
  /** First spelling of each distinct stored number; null once there are too many to remember. */
  spellings: Map<number, string> | null = new Map();
  /** Whether every number so far is an integer (tracked for wide columns only). */
  allIntegers = true;
  firstText: FirstText | null = null;
  private readonly dictionary = new Map<string, number>();
  private leadingMissing = 0;
  private readonly verbatim: boolean;
  private readonly numericFastPath: boolean;

  constructor(
    readonly name: string,
    readonly reading: ColumnReading,
    readonly wide: boolean,
    private readonly extraMissing: ReadonlySet<string> | null,
    /** Expected number of rows, to size the buffers. */
    private readonly expectedRows: number,
  ) {
    this.verbatim = reading === "verbatim";
    this.numericFastPath = extraMissing === null;
    if (reading !== "infer") {
      this.state = ColumnState.Text;
      this.codes = this.newCodes(0);
    }
  }

  add(field: string, line: number): void {
    // Hot path: a numeric column and a field that is a plain number. The field cannot be a
    // missing spelling then (none of them reads as a number, and extra ones disable this path).
    if (this.state === ColumnState.Numeric && this.numericFastPath) {
      const value = parseNumericField(field);
      if (value === value) {
        if (this.spellings === null && !this.wide) this.numbers!.push(value);
        else this.pushNumber(value, field);
        return;
      }
    }
    this.addField(field, line);
  }

  private addField(field: string, line: number): void {
    if (this.verbatim) {
      this.pushText(field);
      return;
    }
    const text = trimField(field);
    if (isMissingSpelling(text) || (this.extraMissing !== null && this.extraMissing.has(text))) {
      this.addMissing();
      return;
    }
    switch (this.state) {
      case ColumnState.Numeric: {
        const value = parseNumericField(text);
        if (value === value) this.pushNumber(value, text);
        else this.turnToText(text, line);
        return;
      }
      case ColumnState.Text:
        this.pushText(text);
        return;
      case ColumnState.Empty:
        this.begin(text, line);
        return;
      case ColumnState.Lost:
        return;
    }
  }

  /** Frees the buffers once the final column has been built. */
  release(): void {
    this.numbers = null;
    this.codes = null;
    this.spellings = null;
  }

  /** Number of distinct numbers seen, or Infinity when more than SPELLING_MEMORY. */
  get distinctNumbers(): number {
    return this.spellings === null ? Infinity : this.spellings.size;
  }

  private addMissing(): void {
    switch (this.state) {
      case ColumnState.Numeric:
        this.numbers!.push(NaN);
        return;
      case ColumnState.Text:
        this.codes!.push(MISSING_CODE);
        return;
      case ColumnState.Empty:
        this.leadingMissing++;
        return;
      case ColumnState.Lost:
        return;
    }
  }

  private begin(text: string, line: number): void {
    const value = parseNumericField(text);
    if (value === value) {
      this.state = ColumnState.Numeric;
      const capacity = Math.max(this.expectedRows, this.leadingMissing + 1);
      this.numbers = this.wide
        ? new GrowableArray((n) => new Float64Array(n), capacity)
        : new GrowableArray((n) => new Float32Array(n), capacity);
      this.numbers.pushRepeated(NaN, this.leadingMissing);
      this.pushNumber(value, text);
    } else {
      this.state = ColumnState.Text;
      this.firstText = { line, value: detachField(text) };
      this.codes = this.newCodes(this.leadingMissing + 1);
      this.codes.pushRepeated(MISSING_CODE, this.leadingMissing);
      this.pushText(text);
    }
  }

  private pushNumber(value: number, text: string): void {
    this.numbers!.push(value);
    // Only the target's task inference asks whether all values are integers.
    if (this.wide && this.allIntegers && !Number.isInteger(value)) this.allIntegers = false;
    const spellings = this.spellings;
    if (spellings !== null) {
      // Keyed by the value as stored, so a stored number finds its spelling again.
      const key = this.wide ? value : Math.fround(value);
      if (!spellings.has(key)) {
        if (spellings.size >= SPELLING_MEMORY) this.spellings = null;
        else spellings.set(key, detachField(text));
      }
    }
  }

  private pushText(text: string): void {
    let code = this.dictionary.get(text);
    if (code === undefined) {
      code = this.vocabulary.length;
      const category = detachField(text);
      this.dictionary.set(category, code);
      this.vocabulary.push(category);
    }
    this.codes!.push(code);
  }

  private turnToText(text: string, line: number): void {
    this.firstText = { line, value: detachField(text) };
    const spellings = this.spellings;
    const numbers = this.numbers!;
    this.numbers = null;
    if (spellings === null && !this.wide) {
      this.state = ColumnState.Lost;
      return;
    }
    // Earlier rows take the first spelling of their number ("1" and "1.0" become one
    // category); a float64 column past the spelling memory falls back to the shortest
    // text that reads back as the same number.
    const codes = this.newCodes(numbers.length + 1);
    this.codes = codes;
    for (let row = 0; row < numbers.length; row++) {
      const value = numbers.at(row);
      if (value !== value) codes.push(MISSING_CODE);
      else this.pushText(spellings?.get(value) ?? String(value));
    }
    this.state = ColumnState.Text;
    this.pushText(text);
  }

  private newCodes(atLeast: number): GrowableArray<Int32Array> {
    return new GrowableArray((n) => new Int32Array(n), Math.max(this.expectedRows, atLeast));
  }
}
