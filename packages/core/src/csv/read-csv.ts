import { createReadStream } from "node:fs";
import { open } from "node:fs/promises";
import { pipeline } from "node:stream/promises";
import { parse as parseStream, type Options as ParseOptions } from "csv-parse";
import { parse as parseSync } from "csv-parse/sync";
import { InputError } from "../errors.js";
import type { Dataset, DatasetContent } from "../dataset/dataset.js";
import { fingerprintContent } from "../dataset/fingerprint.js";
import { csvInputError, type ParsePosition } from "./csv-errors.js";
import { holdsHeaderLine, sniffDelimiter, type Delimiter } from "./sniff-delimiter.js";
import { TableBuilder, type IngestOptions } from "./table-builder.js";

export type { IngestOptions } from "./table-builder.js";

/**
 * Reads a training CSV file into typed columns. The file is streamed through csv-parse
 * and every field is converted into its column's typed buffer as it arrives, so memory
 * holds the typed data, not the text. Types are inferred in that same pass (see
 * infer-types.ts); only a column that turns categorical after over a thousand distinct
 * numbers costs a second pass over the file.
 */
export async function readCsvDataset(path: string, options: IngestOptions): Promise<Dataset> {
  const { delimiter, expectedRows } = await inspectFile(path);
  const table = new TableBuilder(path, options, expectedRows);
  await streamRecords(path, delimiter, table, table.onRecord);
  const lost = table.lostColumns();
  if (lost.length > 0) {
    const reread = new TableBuilder(path, options, table.rows, new Set(lost));
    await streamRecords(path, delimiter, reread, reread.onRecord);
    table.adoptRereads(reread);
  }
  return withFingerprint(table.finish());
}

/** The same as readCsvDataset, for CSV text already in memory (small inputs, tests). */
export function parseCsvDataset(text: string, source: string, options: IngestOptions): Dataset {
  if (text.length === 0) throw new InputError(source, "the file is empty");
  const delimiter = sniffDelimiter(text);
  const table = new TableBuilder(source, options, countLineEnds(text));
  parseRecords(text, source, delimiter, table, table.onRecord);
  const lost = table.lostColumns();
  if (lost.length > 0) {
    const reread = new TableBuilder(source, options, table.rows, new Set(lost));
    parseRecords(text, source, delimiter, reread, reread.onRecord);
    table.adoptRereads(reread);
  }
  return withFingerprint(table.finish());
}

/** Line feeds in `text`: about the number of data rows (a sizing hint; CR-only text gives 0). */
export function countLineEnds(text: string): number {
  let count = 0;
  for (let at = text.indexOf("\n"); at >= 0; at = text.indexOf("\n", at + 1)) count++;
  return count;
}

function withFingerprint(content: DatasetContent): Dataset {
  return { ...content, fingerprint: fingerprintContent(content) };
}

/** Receives each parsed record with the line on which it ends. */
export type RecordHandler = (record: string[], line: number) => void;

/**
 * csv-parse settings shared by every reader: a header line is required (it is the first
 * record), quotes are RFC 4180 double quotes, line ends (LF, CRLF, CR) are detected, a UTF-8
 * byte-order mark is dropped, blank lines are skipped, and rows must have as many fields as
 * the header.
 */
export function parserOptions(delimiter: Delimiter): ParseOptions {
  return { delimiter, bom: true, skip_empty_lines: true, relax_column_count: false, cast: false };
}

/**
 * Streams a file's records into `onRecord`, translating parser failures into InputError.
 *
 * Records are taken from 'data' events rather than csv-parse's `on_record` hook, which
 * builds two context objects per record (about a tenth of the ingest time). csv-parse
 * pushes each record from inside its transform while the stream flows with an empty
 * buffer, so Node emits 'data' at once and `parser.info.lines` is the line of the record
 * being handled (test/csv-errors checks line numbers after multi-line records).
 */
export async function streamRecords(path: string, delimiter: Delimiter, position: ParsePosition, onRecord: RecordHandler): Promise<void> {
  const parser = parseStream(parserOptions(delimiter));
  let failed = false;
  parser.on("data", (record: string[]) => {
    if (failed) return;
    try {
      onRecord(record, parser.info.lines);
    } catch (error) {
      failed = true;
      parser.destroy(error instanceof Error ? error : new Error(String(error)));
    }
  });
  try {
    await pipeline(createReadStream(path, { highWaterMark: 1 << 20 }), parser);
  } catch (error) {
    throw csvInputError(error, path, position);
  }
}

/** Parses CSV text's records into `onRecord`, translating parser failures into InputError. */
export function parseRecords(text: string, source: string, delimiter: Delimiter, position: ParsePosition, onRecord: RecordHandler): void {
  try {
    parseSync(text, {
      ...parserOptions(delimiter),
      // The hook returns null so the parser keeps no records.
      on_record: (record: string[], context: { lines: number }) => {
        onRecord(record, context.lines);
        return null;
      },
    });
  } catch (error) {
    throw csvInputError(error, source, position);
  }
}

/** What the first bytes of a file tell before it is parsed. */
export interface FileInspection {
  readonly delimiter: Delimiter;
  /** Data rows expected from the file size and the length of the first lines (an estimate). */
  readonly expectedRows: number;
}

/**
 * Reads the start of a file (at least its header line, at least 64 KB when there is that
 * much) to sniff the delimiter and estimate the row count.
 */
export async function inspectFile(path: string): Promise<FileInspection> {
  let handle;
  try {
    handle = await open(path, "r");
  } catch (error) {
    throw csvInputError(error, path, { headerFields: 0, lastLine: 0 });
  }
  try {
    const size = (await handle.stat()).size;
    if (size === 0) throw new InputError(path, "the file is empty");
    const chunk = Buffer.alloc(1 << 16);
    let text = "";
    let total = 0;
    for (;;) {
      const { bytesRead } = await handle.read(chunk, 0, chunk.length, total);
      if (bytesRead === 0) break;
      total += bytesRead;
      text += chunk.toString("utf8", 0, bytesRead);
      // A header longer than 1 MB is not a header; sniff what has been read.
      if (holdsHeaderLine(text) || total >= 1 << 20) break;
    }
    return { delimiter: sniffDelimiter(text), expectedRows: estimateRows(text, total, size) };
  } catch (error) {
    throw csvInputError(error, path, { headerFields: 0, lastLine: 0 });
  } finally {
    await handle.close();
  }
}

/** File size over the mean length of the complete lines after the header in `start`, plus 5 %. */
function estimateRows(start: string, startBytes: number, fileBytes: number): number {
  const headerEnd = start.indexOf("\n");
  const lastEnd = start.lastIndexOf("\n");
  if (headerEnd < 0 || lastEnd <= headerEnd) return 1024;
  const lines = countLineEnds(start.slice(headerEnd + 1, lastEnd + 1));
  const bytesPerLine = (((lastEnd - headerEnd) / start.length) * startBytes) / lines;
  return Math.ceil((1.05 * fileBytes) / bytesPerLine) + 16;
}
