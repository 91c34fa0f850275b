const LF = 10;
const CR = 13;

/**
 * Physical line numbers in text that arrives in pieces, for messages that name a line. A line
 * ends at LF, CR or CRLF, as editors count them, inside quoted fields too. Positions are offsets
 * in all the text appended so far; the text before a released offset is dropped, so only the
 * unfinished record is held, not the file.
 *
 * Counting goes forward only, by `indexOf` from one line end to the next (a memchr in V8), which
 * costs one call per line rather than a look at every character.
 */
export class LineTracker {
  private text = "";
  /** Offset of `text[0]`. */
  private base = 0;
  /** Line ends in [0, counted). */
  private ends = 0;
  private counted = 0;
  /** Offsets of the next LF and CR at or after `counted`; Infinity while the held text has none. */
  private nextLf = Infinity;
  private nextCr = Infinity;

  /** Offset of the end of the text appended so far. */
  get length(): number {
    return this.base + this.text.length;
  }

  append(piece: string): void {
    const from = this.length;
    this.text += piece;
    if (this.nextLf === Infinity) this.nextLf = this.find("\n", from);
    if (this.nextCr === Infinity) this.nextCr = this.find("\r", from);
  }

  /** Drops the text before `offset`; no position before it may be asked about afterwards. */
  release(offset: number): void {
    if (offset <= this.base) return;
    this.advance(offset);
    this.text = this.text.slice(offset - this.base);
    this.base = offset;
  }

  /** UTF-16 code unit at `offset` (NaN past the end). */
  codeAt(offset: number): number {
    return this.text.charCodeAt(offset - this.base);
  }

  /** Line of the character at `offset`. */
  lineAt(offset: number): number {
    this.advance(offset);
    return this.ends + 1;
  }

  /** Line of the last character before `end`, a line end that closes the text before it not counted. */
  lineEndingAt(end: number): number {
    this.advance(end);
    const last = this.codeAt(end - 1);
    return last === LF || last === CR ? this.ends : this.ends + 1;
  }

  /** Counts the line ends in [counted, end). */
  private advance(end: number): void {
    if (end <= this.counted) return;
    let ends = this.ends;
    let lf = this.nextLf;
    for (; lf < end; lf = this.find("\n", lf + 1)) ends++;
    let cr = this.nextCr;
    // A CR followed by LF is one line end, already counted at the LF.
    for (; cr < end; cr = this.find("\r", cr + 1)) if (this.codeAt(cr + 1) !== LF) ends++;
    this.nextLf = lf;
    this.nextCr = cr;
    this.ends = ends;
    this.counted = end;
  }

  private find(char: string, from: number): number {
    const at = this.text.indexOf(char, from - this.base);
    return at < 0 ? Infinity : at + this.base;
  }
}
