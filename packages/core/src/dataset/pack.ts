import { endianness } from "node:os";
import type { ClassTarget, FeatureColumn, Target, ValueTarget } from "../frame.js";
import type { Dataset } from "./dataset.js";
import { sha256Hex } from "./fingerprint.js";
import { align8, bytesOf, contentLayout, PackHeaderSchema, type PackBody } from "./pack-layout.js";

/**
 * A dataset pack: one binary buffer with everything a worker needs to fit on a dataset.
 *
 *   bytes 0..8    magic "NSPACK01"
 *   bytes 8..12   u32 length of the meta JSON (padded), bytes 12..16 zero
 *   meta JSON     { source, droppedRows, fingerprint }, space-padded to 8 bytes
 *   content       see pack-layout.ts; the fingerprint is sha256 of exactly these bytes
 *
 * Numeric and boolean features are stored as float32. Float32 keeps 24 significant bits
 * (about 7 decimal digits), more than measured features carry, and every learner here
 * only compares feature values with thresholds or scales them, so the half-size storage
 * changes no decision while halving memory and cache traffic for every worker. Targets
 * stay float64: losses and metrics are computed on them and must not lose precision.
 * Integers beyond 2^24 (identifiers) lose exactness as float32 features; leave them out
 * with `ignore`.
 */
const MAGIC = "NSPACK01";
const PREFIX = 16;

export interface PackOptions {
  /** Back the pack by a SharedArrayBuffer, so worker threads can view it without copying. */
  shared?: boolean;
}

export function packDataset(dataset: Dataset, options: PackOptions = {}): Uint8Array {
  const layout = contentLayout(dataset);
  // The meta's fingerprint field has a fixed length (64 hex digits), so the meta can be laid
  // out before the content is hashed and filled in afterwards.
  const placeholder = "0".repeat(64);
  const metaJson = (fingerprint: string): Buffer =>
    Buffer.from(JSON.stringify({ source: dataset.source, droppedRows: dataset.droppedRows, fingerprint }), "utf8");
  const metaLength = align8(metaJson(placeholder).length);
  const contentStart = PREFIX + metaLength;
  const total = contentStart + layout.byteLength;
  const buffer = options.shared === true ? new SharedArrayBuffer(total) : new ArrayBuffer(total);
  const bytes = new Uint8Array(buffer);
  bytes.set(Buffer.from(MAGIC, "latin1"), 0);
  new DataView(buffer).setUint32(8, metaLength, true);
  bytes.set(layout.head, contentStart);
  let at = contentStart + layout.head.length;
  for (const body of layout.bodies) {
    bytes.set(bytesOf(body), at);
    at += align8(body.byteLength);
  }
  const fingerprint = sha256Hex(bytes.subarray(contentStart));
  const meta = Buffer.alloc(metaLength, 0x20);
  metaJson(fingerprint).copy(meta);
  bytes.set(meta, PREFIX);
  return bytes;
}

export interface UnpackOptions {
  /** Recompute the content hash and refuse a pack whose fingerprint does not match. */
  verify?: boolean;
}

/**
 * A dataset whose columns are typed-array views onto `bytes`' buffer (no copy), so a pack
 * in a SharedArrayBuffer is shared by every thread that unpacks it. Only when `bytes` does
 * not start 8-byte aligned in its buffer is it copied once, since float64 views need that.
 */
export function unpackDataset(bytes: Uint8Array, options: UnpackOptions = {}): Dataset {
  if (endianness() !== "LE") throw new Error("dataset packs are little-endian; this machine is big-endian");
  if (bytes.length < PREFIX || Buffer.from(bytes.buffer, bytes.byteOffset, 8).toString("latin1") !== MAGIC) {
    throw new Error("not a nightshift dataset pack (bad magic bytes)");
  }
  const aligned = bytes.byteOffset % 8 === 0 ? bytes : copyAligned(bytes);
  const view = new DataView(aligned.buffer, aligned.byteOffset, aligned.byteLength);
  const metaLength = view.getUint32(8, true);
  const meta = JSON.parse(textOf(aligned, PREFIX, metaLength)) as { source: string; droppedRows: number; fingerprint: string };
  const contentStart = PREFIX + metaLength;
  const headerLength = view.getUint32(contentStart, true);
  const header = PackHeaderSchema.parse(JSON.parse(textOf(aligned, contentStart + 8, headerLength)));
  const bodiesStart = aligned.byteOffset + contentStart + 8 + align8(headerLength);
  const buffer = aligned.buffer;
  const float32 = (body: PackBody): Float32Array => new Float32Array(buffer, bodiesStart + body.offset, body.length);
  const int32 = (body: PackBody): Int32Array => new Int32Array(buffer, bodiesStart + body.offset, body.length);
  const float64 = (body: PackBody): Float64Array => new Float64Array(buffer, bodiesStart + body.offset, body.length);

  if (options.verify === true) {
    const actual = sha256Hex(aligned.subarray(contentStart));
    if (actual !== meta.fingerprint) throw new Error(`dataset pack is corrupt: content hash ${actual} != ${meta.fingerprint}`);
  }
  const features: FeatureColumn[] = header.features.map((column) =>
    column.kind === "categorical"
      ? { name: column.name, kind: "categorical", codes: int32(column.body), vocabulary: column.vocabulary }
      : { name: column.name, kind: column.kind, values: float32(column.body) },
  );
  const target: Target =
    header.target.kind === "classes"
      ? ({ name: header.target.name, kind: "classes", codes: int32(header.target.body), labels: header.target.labels } satisfies ClassTarget)
      : ({ name: header.target.name, kind: "values", values: float64(header.target.body) } satisfies ValueTarget);
  return {
    source: meta.source,
    task: header.task,
    features,
    target,
    ...(header.groups !== undefined ? { groups: int32(header.groups.body), groupColumn: header.groups.column } : {}),
    rowCount: header.rowCount,
    droppedRows: meta.droppedRows,
    fingerprint: meta.fingerprint,
  };
}

function textOf(bytes: Uint8Array, start: number, length: number): string {
  return Buffer.from(bytes.buffer, bytes.byteOffset + start, length).toString("utf8");
}

function copyAligned(bytes: Uint8Array): Uint8Array {
  const copy = new Uint8Array(bytes.length);
  copy.set(bytes);
  return copy;
}
