import { z } from "zod";
import type { NumericColumn } from "../frame.js";
import { TaskSchema } from "../task.js";
import type { DatasetContent } from "./dataset.js";

/**
 * Byte layout of a dataset pack's content (the part the fingerprint covers):
 *
 *   u32 header byte length, u32 zero, header JSON (space-padded to 8 bytes),
 *   then each body (typed array, little-endian) zero-padded to 8 bytes.
 *
 * Body offsets in the header count from the first body, so they do not depend on the
 * header's own length. Every body starts 8-byte aligned, so unpacking makes typed-array
 * views onto the same buffer, float64 included.
 */
const BodySchema = z.object({
  type: z.enum(["float32", "float64", "int32"]),
  offset: z.number().int().nonnegative(),
  length: z.number().int().nonnegative(),
});
export type PackBody = z.infer<typeof BodySchema>;

export const PackHeaderSchema = z.object({
  format: z.literal("nightshift-dataset-pack/1"),
  task: TaskSchema,
  rowCount: z.number().int().nonnegative(),
  features: z.array(
    z.discriminatedUnion("kind", [
      z.object({ name: z.string(), kind: z.enum(["numeric", "boolean"]), body: BodySchema }),
      z.object({ name: z.string(), kind: z.literal("categorical"), vocabulary: z.array(z.string()), body: BodySchema }),
    ]),
  ),
  target: z.discriminatedUnion("kind", [
    z.object({ name: z.string(), kind: z.literal("classes"), labels: z.array(z.string()), body: BodySchema }),
    z.object({ name: z.string(), kind: z.literal("values"), body: BodySchema }),
  ]),
  groups: z.object({ column: z.string(), body: BodySchema }).optional(),
});
export type PackHeader = z.infer<typeof PackHeaderSchema>;

export type PackArray = Float32Array | Float64Array | Int32Array;

export interface ContentLayout {
  /** The u32 length prefix, the zero word and the padded header JSON. */
  readonly head: Uint8Array;
  /** The bodies in order; each starts at a multiple of 8 bytes after the previous one. */
  readonly bodies: readonly PackArray[];
  /** Total content length in bytes. */
  readonly byteLength: number;
}

export function align8(bytes: number): number {
  return (bytes + 7) & ~7;
}

/** Lays out a dataset's content; numeric features stored as float64 are converted to float32. */
export function contentLayout(content: DatasetContent): ContentLayout {
  const bodies: PackArray[] = [];
  let offset = 0;
  const body = (array: PackArray): PackBody => {
    const type = array instanceof Float32Array ? "float32" : array instanceof Float64Array ? "float64" : "int32";
    const descriptor = { type, offset, length: array.length } as const;
    bodies.push(array);
    offset += align8(array.byteLength);
    return descriptor;
  };
  const header: PackHeader = {
    format: "nightshift-dataset-pack/1",
    task: content.task,
    rowCount: content.rowCount,
    features: content.features.map((column) =>
      column.kind === "categorical"
        ? { name: column.name, kind: column.kind, vocabulary: [...column.vocabulary], body: body(column.codes) }
        : { name: column.name, kind: column.kind, body: body(asFloat32(column)) },
    ),
    target:
      content.target.kind === "classes"
        ? { name: content.target.name, kind: "classes", labels: [...content.target.labels], body: body(content.target.codes) }
        : { name: content.target.name, kind: "values", body: body(content.target.values) },
    ...(content.groups !== undefined ? { groups: { column: content.groupColumn ?? "", body: body(content.groups) } } : {}),
  };
  const json = Buffer.from(JSON.stringify(header), "utf8");
  const head = Buffer.alloc(8 + align8(json.length), 0x20);
  head.writeUInt32LE(json.length, 0);
  head.writeUInt32LE(0, 4);
  json.copy(head, 8);
  return { head, bodies, byteLength: head.length + offset };
}

function asFloat32(column: NumericColumn): Float32Array {
  return column.values instanceof Float32Array ? column.values : Float32Array.from(column.values);
}

/** The bytes of a typed array, as a view. */
export function bytesOf(array: PackArray): Uint8Array {
  return new Uint8Array(array.buffer, array.byteOffset, array.byteLength);
}
