import { describe, expect, it } from "vitest";
import { parseCsvDataset } from "../src/csv/read-csv.js";
import type { Dataset } from "../src/dataset/dataset.js";
import { sha256Hex } from "../src/dataset/fingerprint.js";
import { packDataset, unpackDataset } from "../src/dataset/pack.js";
import type { CategoricalColumn, NumericColumn } from "../src/frame.js";

const TEXT = [
  "site,size,colour,fresh,y",
  "A,1.5,red,yes,0.25",
  "B,2.25,blue,no,1.5",
  "A,,red,,2.75",
  "C,-3,,yes,3",
  "B,4e3,green,no,-1",
].join("\n");
const read = (text = TEXT): Dataset => parseCsvDataset(text, "pack.csv", { target: "y", group: "site" });

function plain(dataset: Dataset): unknown {
  return JSON.parse(JSON.stringify(dataset, (_, value: unknown) => (ArrayBuffer.isView(value) ? Array.from(value as Float32Array) : value)));
}

describe("dataset pack", () => {
  it("round-trips every column, the target and the groups", () => {
    const dataset = read();
    const unpacked = unpackDataset(packDataset(dataset));
    expect(plain(unpacked)).toEqual(plain(dataset));
    expect(unpacked.features[1].kind).toBe("categorical");
    expect(unpacked.target.kind === "values" && unpacked.target.values).toBeInstanceOf(Float64Array);
    expect((unpacked.features[0] as NumericColumn).values).toBeInstanceOf(Float32Array);
  });

  it("round-trips a classification target with its labels", () => {
    const dataset = parseCsvDataset("x,label\n1,cat\n2,dog\n3,cat\n4,emu\n", "labels.csv", { target: "label" });
    const unpacked = unpackDataset(packDataset(dataset));
    expect(plain(unpacked)).toEqual(plain(dataset));
  });

  it("has the ingest fingerprint, which is the sha256 of its content", () => {
    const dataset = read();
    const bytes = packDataset(dataset);
    expect(unpackDataset(bytes).fingerprint).toBe(dataset.fingerprint);
    // The content starts after the 16-byte prefix and the meta JSON.
    const metaLength = new DataView(bytes.buffer).getUint32(8, true);
    expect(sha256Hex(bytes.subarray(16 + metaLength))).toBe(dataset.fingerprint);
    expect(() => unpackDataset(bytes, { verify: true })).not.toThrow();
  });

  it("keeps the fingerprint for the same content and changes it when one value changes", () => {
    const first = read();
    expect(read().fingerprint).toBe(first.fingerprint);
    expect(parseCsvDataset(TEXT, "elsewhere.csv", { target: "y", group: "site" }).fingerprint).toBe(first.fingerprint);
    expect(read(TEXT.replace("2.25", "2.5")).fingerprint).not.toBe(first.fingerprint);
    expect(read(TEXT.replace("green", "grey")).fingerprint).not.toBe(first.fingerprint);
    expect(read(TEXT.replace("-1", "-2")).fingerprint).not.toBe(first.fingerprint);
  });

  it("is backed by a SharedArrayBuffer when shared, and unpacks to views without copying", () => {
    const bytes = packDataset(read(), { shared: true });
    expect(bytes.buffer).toBeInstanceOf(SharedArrayBuffer);
    const unpacked = unpackDataset(bytes);
    const size = unpacked.features[0] as NumericColumn;
    const colour = unpacked.features[1] as CategoricalColumn;
    expect(size.values.buffer).toBe(bytes.buffer);
    expect(colour.codes.buffer).toBe(bytes.buffer);
    expect(unpacked.groups!.buffer).toBe(bytes.buffer);
    // A write through the pack is seen by the view: same memory.
    const before = size.values[0];
    new Float32Array(bytes.buffer, size.values.byteOffset, 1)[0] = 42;
    expect(size.values[0]).toBe(42);
    expect(before).toBe(1.5);
  });

  it("unpacks a pack that sits at an unaligned offset", () => {
    const bytes = packDataset(read());
    const shifted = new Uint8Array(bytes.length + 3);
    shifted.set(bytes, 3);
    expect(plain(unpackDataset(shifted.subarray(3)))).toEqual(plain(read()));
  });

  it("refuses bytes that are not a pack, and a corrupted pack when verifying", () => {
    expect(() => unpackDataset(new Uint8Array(64))).toThrow(/not a nightshift dataset pack/);
    const bytes = packDataset(read());
    bytes[bytes.length - 20] ^= 0xff;
    expect(() => unpackDataset(bytes, { verify: true })).toThrow(/corrupt/);
  });
});
