import { open } from "node:fs/promises";
import { InputError } from "../errors.js";
import type { Dataset, DatasetContent } from "../dataset/dataset.js";
import { fingerprintContent } from "../dataset/fingerprint.js";
import { fileReadError } from "./csv-errors.js";
import { parseRecords, streamRecords } from "./csv-records.js";
import { holdsHeaderLine, sniffDialect, type Dialect } from "./sniff-delimiter.js";
import { TableBuilder, type IngestOptions } from "./table-builder.js";

export type { IngestOptions } from "./table-builder.js";

/**
 * Reads a training CSV file into typed columns. The file is streamed through papaparse (see
 * csv-records.ts for the dialect) and every field is converted into its column's typed buffer
 * as it arrives, so memory holds the typed data, not the text. Types are inferred in that same
 * pass (see infer-types.ts); only a column that turns categorical after over a thousand
 * distinct numbers costs a second pass over the file.
 */
export async function readCsvDataset(path: string, options: IngestOptions): Promise<Dataset> {
  const { dialect, expectedRows } = await inspectFile(path);
  const table = new TableBuilder(path, options, expectedRows);
  await streamRecords(path, dialect, table.onRecord);
  const lost = table.lostColumns();
  if (lost.length > 0) {
    const reread = new TableBuilder(path, options, table.rows, new Set(lost));
    await streamRecords(path, dialect, reread.onRecord);
    table.adoptRereads(reread);
  }
  return withFingerprint(table.finish());
}

/** The same as readCsvDataset, for CSV text already in memory (small inputs, tests). */
export function parseCsvDataset(text: string, source: string, options: IngestOptions): Dataset {
  if (text.length === 0) throw new InputError(source, "the file is empty");
  const dialect = sniffDialect(text);
  const table = new TableBuilder(source, options, countLineEnds(text));
  parseRecords(text, source, dialect, table.onRecord);
  const lost = table.lostColumns();
  if (lost.length > 0) {
    const reread = new TableBuilder(source, options, table.rows, new Set(lost));
    parseRecords(text, source, dialect, reread.onRecord);
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

/** What the first bytes of a file tell before it is parsed. */
export interface FileInspection {
  readonly dialect: Dialect;
  /** Data rows expected from the file size and the length of the first lines (an estimate). */
  readonly expectedRows: number;
}

/**
 * Reads the start of a file (at least its header line, at least 64 KB when there is that
 * much) to sniff the delimiter and line end and estimate the row count.
 */
export async function inspectFile(path: string): Promise<FileInspection> {
  let handle;
  try {
    handle = await open(path, "r");
  } catch (error) {
    throw fileReadError(error, path);
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
    return { dialect: sniffDialect(text), expectedRows: estimateRows(text, total, size) };
  } catch (error) {
    throw fileReadError(error, path);
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
