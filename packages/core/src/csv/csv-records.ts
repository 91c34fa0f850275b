import { createReadStream } from "node:fs";
import Papa from "papaparse";
import { fileReadError, overlongRecordError, raggedRowError, textAfterQuoteError, unclosedQuoteError } from "./csv-errors.js";
import { LineTracker } from "./line-tracker.js";
import type { Dialect } from "./sniff-delimiter.js";

/** Receives each parsed record with the line on which it ends. */
export type RecordHandler = (record: string[], line: number) => void;

/**
 * Bytes per read of a file. papaparse joins what it kept of the last chunk to the next one and
 * makes garbage in proportion to a chunk; reading the file of bench/ingest.bench.ts, 64 KB reads
 * took about 60 MB less peak memory and no more time than 1 MB ones (docs/BENCHMARKS.md).
 */
const READ_BYTES = 1 << 16;

/**
 * Longest record a streamed file may hold, in characters. papaparse parses an unfinished record
 * again from its start with every chunk that arrives, so a quote that is never closed would
 * cost time quadratic in the rest of the file and hold all of it as one string; a record this
 * long is taken for that mistake instead. Re-reading up to this length in 64 KB steps costs
 * about 2^22 · 2^22 / 2^17 = 2^27 characters, each copied and scanned a few times: a quarter
 * of a CPU second here.
 */
export const MAX_RECORD_CHARS = 1 << 22;

const QUOTE = 34;

/**
 * Parses CSV text already in memory, handing each record to `onRecord`. The dialect and the
 * errors are those of streamRecords, but for MAX_RECORD_CHARS: the text is parsed in one piece.
 */
export function parseRecords(text: string, source: string, dialect: Dialect, onRecord: RecordHandler): void {
  const receiver = new RecordReceiver(source, onRecord);
  // papaparse drops a leading byte-order mark from a string itself; the line tracker must see the same text.
  receiver.receive(withoutBom(text));
  Papa.parse<string[]>(text, parserConfig(dialect, receiver));
  receiver.rethrow();
}

/**
 * Streams a CSV file through papaparse, handing each record to `onRecord` with the line on which
 * it ends. The dialect is RFC 4180 with the given delimiter and line end (LF, CRLF or CR): double
 * quotes around fields that hold delimiters, quotes (written twice) or line breaks; a UTF-8
 * byte-order mark is dropped; blank lines are skipped; every row must have as many fields as the
 * header (the first record). papaparse is lenient where RFC 4180 is silent: a quote inside an
 * unquoted field is text, and spaces between a closing quote and the delimiter are dropped.
 * Bad input throws an InputError naming the file and line; an error thrown by `onRecord` stops
 * the reading and is thrown as it is.
 */
export async function streamRecords(path: string, dialect: Dialect, onRecord: RecordHandler): Promise<void> {
  const receiver = new RecordReceiver(path, onRecord);
  const input = createReadStream(path, { encoding: "utf8", highWaterMark: READ_BYTES });
  let first = true;
  // These two listeners come before papaparse's, so each chunk is held before its records arrive.
  input.on("data", (chunk: string | Buffer) => {
    // Strings, as the stream decodes UTF-8 itself (a character split between reads stays whole).
    const text = String(chunk);
    receiver.receive(first ? withoutBom(text) : text);
    first = false;
  });
  input.on("end", () => receiver.receive(""));
  try {
    await new Promise<void>((resolve, reject) => {
      Papa.parse<string[], typeof input>(input, {
        ...parserConfig(dialect, receiver),
        beforeFirstChunk: withoutBom,
        complete: () => resolve(),
        error: reject,
      });
      // This one comes after papaparse's, once the chunk's records have been handled.
      input.on("data", () => {
        const stop = receiver.failure ?? receiver.overlong();
        if (stop === null) receiver.release();
        else {
          input.destroy();
          reject(stop);
        }
      });
    });
  } catch (error) {
    throw fileReadError(error, path);
  }
  receiver.rethrow();
}

/**
 * papaparse settings: the sniffed delimiter and line end, records as arrays of strings (no header
 * mapping, no type conversion: the columns convert their fields themselves), and blank lines
 * passed through so that lines can be counted.
 */
function parserConfig(dialect: Dialect, receiver: RecordReceiver): Papa.ParseConfig<string[]> {
  const { delimiter, lineEnd } = dialect;
  return { delimiter, newline: lineEnd, header: false, dynamicTyping: false, skipEmptyLines: false, step: receiver.step };
}

function withoutBom(text: string): string {
  return text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
}

/**
 * Takes papaparse's records one by one: skips blank lines, numbers lines, checks each row's
 * width against the header and turns papaparse's quote errors into InputErrors. papaparse
 * reports where a record ends (`meta.cursor`, an offset in all the text parsed so far), not on
 * which line, so the line tracker holds the text of the unfinished record to count lines in.
 */
class RecordReceiver {
  readonly lines = new LineTracker();
  failure: Error | null = null;
  /** Offset where the next record starts: the end of the last one. */
  private recordStart = 0;
  /** Offset of the text papaparse is parsing; the error indexes it reports count from there. */
  private parseStart = 0;
  private headerFields = 0;

  constructor(
    private readonly source: string,
    private readonly onRecord: RecordHandler,
  ) {}

  /** Holds the next piece of text, which papaparse is about to parse after what it kept of the last one. */
  receive(piece: string): void {
    this.lines.append(piece);
    this.parseStart = this.recordStart;
  }

  /** Drops the text of the records already handled. */
  release(): void {
    this.lines.release(this.recordStart);
  }

  /** The error for an unfinished record longer than MAX_RECORD_CHARS, or null. */
  overlong(): Error | null {
    if (this.lines.length - this.recordStart <= MAX_RECORD_CHARS) return null;
    return overlongRecordError(this.source, this.lines.lineAt(this.recordStart), MAX_RECORD_CHARS);
  }

  rethrow(): void {
    if (this.failure !== null) throw this.failure;
  }

  readonly step = (results: Papa.ParseStepResult<string[]>, parser: Papa.Parser): void => {
    try {
      this.take(results.data, results.meta.cursor, results.errors);
    } catch (error) {
      this.failure = error instanceof Error ? error : new Error(String(error));
      parser.abort();
    }
  };

  private take(record: string[], end: number, errors: Papa.ParseError[]): void {
    const start = this.recordStart;
    this.recordStart = end;
    if (errors.length > 0) throw this.quoteError(errors[0], start, end);
    // A blank line comes as one empty field (a quoted empty field `""` is not blank).
    if (record.length === 1 && record[0].length === 0 && (end === start || this.lines.codeAt(start) !== QUOTE)) return;
    const line = this.lines.lineEndingAt(end);
    if (this.headerFields === 0) this.headerFields = record.length;
    else if (record.length !== this.headerFields) throw raggedRowError(this.source, line, record.length, this.headerFields);
    this.onRecord(record, line);
  }

  private quoteError(error: Papa.ParseError, start: number, end: number): Error {
    // papaparse's index is that of the character after the field's opening quote, in the text it parses.
    const index = this.parseStart + (error.index ?? -1);
    const line = this.lines.lineAt(index >= start && index <= end ? index : start);
    if (error.code === "MissingQuotes") return unclosedQuoteError(this.source, line, this.lines.lineEndingAt(end));
    return textAfterQuoteError(this.source, line);
  }
}

/**
 * A copy of a field that does not keep alive the text it was cut from. papaparse cuts fields out
 * of the text it parses (a chunk of the file, or all the text given) with `substring`, and V8
 * keeps the whole of that text for as long as such a slice lives; fields kept past their record
 * (category names, spellings, column names) are copied (a concatenation, flattened when sliced).
 */
export function detachField(field: string): string {
  return (" " + field).slice(1);
}
