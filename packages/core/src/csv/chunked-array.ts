/**
 * A growable column buffer for streaming ingest. Values go into a list of chunks whose
 * size doubles up to a cap, so growing never copies what is already stored, a wide file
 * with few rows does not reserve big chunks for every column, and the final exact-size
 * array is built one column at a time (peak memory: the data plus one column).
 */
export type NumericArray = Float32Array | Float64Array | Int32Array;

const FIRST_CHUNK = 1024;
const LARGEST_CHUNK = 1 << 16;

export class ChunkedArray<T extends NumericArray> {
  private readonly chunks: T[] = [];
  private current: T;
  private used = 0;
  private stored = 0;

  constructor(private readonly allocate: (length: number) => T) {
    this.current = allocate(FIRST_CHUNK);
  }

  get length(): number {
    return this.stored + this.used;
  }

  push(value: number): void {
    if (this.used === this.current.length) this.nextChunk();
    this.current[this.used++] = value;
  }

  pushRepeated(value: number, count: number): void {
    for (let i = 0; i < count; i++) this.push(value);
  }

  /** Calls `visit(value)` for every stored value in order. */
  forEach(visit: (value: number) => void): void {
    for (const chunk of this.chunks) for (let i = 0; i < chunk.length; i++) visit(chunk[i]);
    const current = this.current;
    for (let i = 0; i < this.used; i++) visit(current[i]);
  }

  /**
   * Copies the values into `target`, keeping only rows whose `keep` entry is 1 when `keep`
   * is given; returns the number of values written.
   */
  copyTo(target: NumericArray, keep: Uint8Array | null): number {
    let row = 0;
    let written = 0;
    const parts = [...this.chunks, this.current.subarray(0, this.used) as T];
    for (const part of parts) {
      if (keep === null) {
        target.set(part, written);
        written += part.length;
        row += part.length;
      } else {
        for (let i = 0; i < part.length; i++, row++) if (keep[row] === 1) target[written++] = part[i];
      }
    }
    return written;
  }

  private nextChunk(): void {
    this.chunks.push(this.current);
    this.stored += this.current.length;
    this.current = this.allocate(Math.min(LARGEST_CHUNK, this.current.length * 2));
    this.used = 0;
  }
}
