/**
 * A column buffer for streaming ingest: one contiguous typed array, sized up front from an
 * estimate of the row count (file size over the bytes per row of the first lines) and
 * grown by half when the estimate was short. At the end the column is handed over without
 * a copy (rows with a missing target are removed in place), so reading a file costs the
 * typed data plus the estimate's slack, not the data twice.
 */
export type NumericArray = Float32Array | Float64Array | Int32Array;

export class GrowableArray<T extends NumericArray> {
  private data: T;
  length = 0;

  constructor(
    private readonly allocate: (length: number) => T,
    capacity: number,
  ) {
    this.data = allocate(Math.max(16, Math.ceil(capacity)));
  }

  push(value: number): void {
    if (this.length === this.data.length) this.grow();
    this.data[this.length++] = value;
  }

  pushRepeated(value: number, count: number): void {
    for (let i = 0; i < count; i++) this.push(value);
  }

  at(index: number): number {
    return this.data[index];
  }

  /**
   * The values, keeping only rows whose `keep` entry is 1 when `keep` is given. The result
   * views this buffer; only when over a fifth of it would be unused is it copied to size.
   * The builder must not be used afterwards.
   */
  finish(keep: Uint8Array | null): T {
    const data = this.data;
    let count = this.length;
    if (keep !== null) {
      let written = 0;
      for (let row = 0; row < count; row++) if (keep[row] === 1) data[written++] = data[row];
      count = written;
    }
    return (count < 0.8 * data.length ? data.slice(0, count) : data.subarray(0, count)) as T;
  }

  private grow(): void {
    const next = this.allocate(Math.ceil(this.data.length * 1.5));
    next.set(this.data);
    this.data = next;
  }
}
