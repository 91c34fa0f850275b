import { createHash } from "node:crypto";
import type { DatasetContent } from "./dataset.js";
import { align8, bytesOf, contentLayout } from "./pack-layout.js";

const ZEROS = new Uint8Array(8);

/**
 * sha256 (hex) of a dataset's pack content, hashed from the columns in place: the same
 * digest `packDataset` writes, without building the pack. Source name and dropped-row count
 * are not content, so the same table read from two files has one fingerprint.
 */
export function fingerprintContent(content: DatasetContent): string {
  const layout = contentLayout(content);
  const hash = createHash("sha256");
  hash.update(layout.head);
  for (const body of layout.bodies) {
    hash.update(bytesOf(body));
    const padding = align8(body.byteLength) - body.byteLength;
    if (padding > 0) hash.update(ZEROS.subarray(0, padding));
  }
  return hash.digest("hex");
}

/** sha256 (hex) of bytes. */
export function sha256Hex(bytes: Uint8Array): string {
  return createHash("sha256").update(bytes).digest("hex");
}
