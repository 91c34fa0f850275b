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

/** True once `start` holds the whole header line (a line end outside quotes). */
export function holdsHeaderLine(start: string): boolean {
  let inQuotes = false;
  for (let i = 0; i < start.length; i++) {
    const char = start[i];
    if (char === '"') inQuotes = !inQuotes;
    else if (!inQuotes && (char === "\n" || char === "\r")) return true;
  }
  return false;
}
