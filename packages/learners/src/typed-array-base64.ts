/**
 * Typed arrays inside JSON models as base64 of their little-endian bytes, so a fitted model
 * is plain JSON and a round trip restores every value bit for bit.
 */
const littleEndian = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

type Numeric = Float64Array | Float32Array | Int32Array;
type NumericConstructor<T extends Numeric> = { new (length: number): T; readonly BYTES_PER_ELEMENT: number };

function bytesOf(array: Numeric): Uint8Array {
  const bytes = new Uint8Array(array.buffer, array.byteOffset, array.byteLength);
  if (littleEndian) return bytes;
  const swapped = new Uint8Array(bytes.length);
  const width = array.BYTES_PER_ELEMENT;
  for (let i = 0; i < bytes.length; i += width) for (let b = 0; b < width; b++) swapped[i + b] = bytes[i + width - 1 - b];
  return swapped;
}

export function typedArrayToBase64(array: Numeric): string {
  return Buffer.from(bytesOf(array)).toString("base64");
}

function fromBase64<T extends Numeric>(text: string, type: NumericConstructor<T>, what: string): T {
  const bytes = Buffer.from(text, "base64");
  const width = type.BYTES_PER_ELEMENT;
  if (bytes.length % width !== 0) throw new TypeError(`${what}: ${bytes.length} bytes is not a whole number of ${width}-byte values`);
  const out = new type(bytes.length / width);
  const target = new Uint8Array(out.buffer);
  if (littleEndian) target.set(bytes);
  else for (let i = 0; i < bytes.length; i += width) for (let b = 0; b < width; b++) target[i + b] = bytes[i + width - 1 - b];
  return out;
}

export const float64FromBase64 = (text: string, what = "float64 array"): Float64Array => fromBase64(text, Float64Array, what);
export const int32FromBase64 = (text: string, what = "int32 array"): Int32Array => fromBase64(text, Int32Array, what);
