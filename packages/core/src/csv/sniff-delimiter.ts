/** The field delimiters nightshift recognises. */
export type Delimiter = "," | ";" | "\t";

const CANDIDATES: readonly Delimiter[] = [",", ";", "\t"];

/**
 * Picks the delimiter of a CSV file from its header line: the candidate that occurs most
 * often outside quotes. Reading the header alone is reliable because column names rarely
 * contain a delimiter, while data rows may (a decimal comma in a `;` file). Ties go to the
 * earlier candidate in `, ; tab`; a header with none of them is a single column, read with `,`.
 * `start` is the beginning of the file (a byte-order mark is skipped); only its first line is read.
 */
export function sniffDelimiter(start: string): Delimiter {
  const counts = [0, 0, 0];
  let inQuotes = false;
  const from = start.charCodeAt(0) === 0xfeff ? 1 : 0;
  for (let i = from; i < start.length; i++) {
    const char = start[i];
    if (char === '"') inQuotes = !inQuotes;
    else if (!inQuotes) {
      if (char === "\n" || char === "\r") break;
      const which = CANDIDATES.indexOf(char as Delimiter);
      if (which >= 0) counts[which]++;
    }
  }
  let best = 0;
  for (let c = 1; c < CANDIDATES.length; c++) if (counts[c] > counts[best]) best = c;
  return CANDIDATES[best];
}

/** The line ends nightshift recognises. */
export type LineEnd = "\n" | "\r\n" | "\r";

/** How a CSV file is written, as its header line tells. */
export interface Dialect {
  readonly delimiter: Delimiter;
  readonly lineEnd: LineEnd;
}

/**
 * The delimiter (see sniffDelimiter) and the line end of a CSV file: the one that ends the header
 * line, LF when there is none. `start` must hold the header line's end, the character after a CR
 * included (see holdsHeaderLine).
 */
export function sniffDialect(start: string): Dialect {
  return { delimiter: sniffDelimiter(start), lineEnd: sniffLineEnd(start) };
}

function sniffLineEnd(start: string): LineEnd {
  const end = headerLineEnd(start);
  if (end < 0 || start[end] === "\n") return "\n";
  return start[end + 1] === "\n" ? "\r\n" : "\r";
}

/**
 * True once `start` holds the whole header line: a line end outside quotes, and after a CR the
 * next character, which tells CR from CRLF.
 */
export function holdsHeaderLine(start: string): boolean {
  const end = headerLineEnd(start);
  return end >= 0 && (start[end] === "\n" || end + 1 < start.length);
}

/** Index of the first line end outside quotes, or -1. */
function headerLineEnd(start: string): number {
  let inQuotes = false;
  for (let i = 0; i < start.length; i++) {
    const char = start[i];
    if (char === '"') inQuotes = !inQuotes;
    else if (!inQuotes && (char === "\n" || char === "\r")) return i;
  }
  return -1;
}
