import { CsvError } from "csv-parse";
import { InputError } from "../errors.js";

/** What the reader knew when the parser stopped, to place the message. */
export interface ParsePosition {
  /** Fields in the header, or 0 before it was read. */
  readonly headerFields: number;
  /** Line on which the last complete record ended (0 before the first). */
  readonly lastLine: number;
}

/**
 * The user-facing form of a parser failure: one InputError naming the file and line.
 * InputErrors raised while handling records pass through unchanged.
 */
export function csvInputError(error: unknown, source: string, position: ParsePosition): Error {
  if (error instanceof InputError) return error;
  if (error instanceof CsvError) {
    const found = error as CsvError & { lines?: number; record?: unknown };
    const line = typeof found.lines === "number" ? found.lines : position.lastLine + 1;
    switch (error.code) {
      case "CSV_RECORD_INCONSISTENT_FIELDS_LENGTH": {
        const fields = Array.isArray(found.record) ? found.record.length : undefined;
        return new InputError(
          `${source}:${line}`,
          `this row has ${fields ?? "a different number of"} fields but the header has ${position.headerFields}`,
        );
      }
      case "CSV_QUOTE_NOT_CLOSED":
        return new InputError(
          `${source}:${position.lastLine + 1}`,
          `a quoted field that starts on this line or later is never closed (the file ends at line ${line} inside quotes)`,
        );
      case "CSV_INVALID_CLOSING_QUOTE":
      case "CSV_NON_TRIMABLE_CHAR_AFTER_CLOSING_QUOTE":
        return new InputError(
          `${source}:${line}`,
          'a closing quote is followed by more text in the same field; a quote inside a quoted field is written twice ("")',
        );
      default:
        return new InputError(`${source}:${line}`, `cannot read the CSV: ${error.message}`);
    }
  }
  const code = (error as NodeJS.ErrnoException | null)?.code;
  if (code === "ENOENT" || code === "EACCES" || code === "EISDIR") {
    return new InputError(source, `cannot read the file (${code === "ENOENT" ? "no such file" : code})`);
  }
  return error instanceof Error ? error : new Error(String(error));
}
