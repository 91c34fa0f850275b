import { InputError } from "../errors.js";

/**
 * The user-facing form of a failure to open or read a file: one InputError naming the file.
 * InputErrors raised while handling records pass through unchanged.
 */
export function fileReadError(error: unknown, source: string): Error {
  if (error instanceof InputError) return error;
  const code = (error as NodeJS.ErrnoException | null)?.code;
  if (code === "ENOENT" || code === "EACCES" || code === "EISDIR") {
    return new InputError(source, `cannot read the file (${code === "ENOENT" ? "no such file" : code})`);
  }
  return error instanceof Error ? error : new Error(String(error));
}

export function raggedRowError(source: string, line: number, fields: number, headerFields: number): InputError {
  return new InputError(`${source}:${line}`, `this row has ${fields} fields but the header has ${headerFields}`);
}

/** `line` is where the unclosed quote opens; `lastLine` is the last line of the file. */
export function unclosedQuoteError(source: string, line: number, lastLine: number): InputError {
  return new InputError(
    `${source}:${line}`,
    `a quoted field that starts on this line or later is never closed (the file ends at line ${lastLine} inside quotes)`,
  );
}

/** `line` is where the quoted field opens. */
export function textAfterQuoteError(source: string, line: number): InputError {
  return new InputError(
    `${source}:${line}`,
    'a closing quote is followed by more text in the same field; a quote inside a quoted field is written twice ("")',
  );
}

/** `line` is where the record starts. */
export function overlongRecordError(source: string, line: number, maxChars: number): InputError {
  return new InputError(
    `${source}:${line}`,
    `a quoted field that starts on this line or later is not closed within ${Math.round(maxChars / 2 ** 20)} M characters ` +
      "(a record that long is taken for a missing closing quote)",
  );
}
