/**
 * The few pieces of the WebAssembly binary format (W3C WebAssembly Core Specification 2.0, §5
 * "Binary Format", with the fixed-width SIMD instructions of §5.4.8) needed to emit exported
 * functions over an imported memory. Instructions are named as in the specification's text format.
 */

export const I32 = 0x7f;
export const F64 = 0x7c;
export const V128 = 0x7b;
type ValueType = typeof I32 | typeof F64 | typeof V128;

function unsignedLeb(value: number): number[] {
  const out: number[] = [];
  do {
    let byte = value & 0x7f;
    value >>>= 7;
    if (value !== 0) byte |= 0x80;
    out.push(byte);
  } while (value !== 0);
  return out;
}

function signedLeb(value: number): number[] {
  const out: number[] = [];
  for (;;) {
    const byte = value & 0x7f;
    value >>= 7;
    if ((value === 0 && (byte & 0x40) === 0) || (value === -1 && (byte & 0x40) !== 0)) {
      out.push(byte);
      return out;
    }
    out.push(byte | 0x80);
  }
}

const vector = (items: number[][]): number[] => [...unsignedLeb(items.length), ...items.flat()];
const name = (text: string): number[] => vector([...Buffer.from(text, "utf8")].map((b) => [b]));
const section = (id: number, content: number[]): number[] => [id, ...unsignedLeb(content.length), ...content];

/** A function body under construction; each method appends one instruction. */
export class FunctionBody {
  readonly bytes: number[] = [];

  private op(...bytes: number[]): this {
    this.bytes.push(...bytes);
    return this;
  }
  private simd(opcode: number, ...immediates: number[]): this {
    return this.op(0xfd, ...unsignedLeb(opcode), ...immediates);
  }
  private memarg(alignLog2: number, offset: number): number[] {
    return [...unsignedLeb(alignLog2), ...unsignedLeb(offset)];
  }

  // Control (§5.4.1); blocks take a closure for their body and close themselves.
  block(body: () => void): this {
    this.op(0x02, 0x40);
    body();
    return this.op(0x0b);
  }
  loop(body: () => void): this {
    this.op(0x03, 0x40);
    body();
    return this.op(0x0b);
  }
  if(body: () => void): this {
    this.op(0x04, 0x40);
    body();
    return this.op(0x0b);
  }
  br(depth: number): this {
    return this.op(0x0c, ...unsignedLeb(depth));
  }
  brIf(depth: number): this {
    return this.op(0x0d, ...unsignedLeb(depth));
  }

  // Variables (§5.4.4).
  localGet(index: number): this {
    return this.op(0x20, ...unsignedLeb(index));
  }
  localSet(index: number): this {
    return this.op(0x21, ...unsignedLeb(index));
  }
  localTee(index: number): this {
    return this.op(0x22, ...unsignedLeb(index));
  }

  // Memory (§5.4.6).
  i32Load(offset: number): this {
    return this.op(0x28, ...this.memarg(2, offset));
  }
  f32Load(offset: number): this {
    return this.op(0x2a, ...this.memarg(2, offset));
  }
  f64Load(offset: number): this {
    return this.op(0x2b, ...this.memarg(3, offset));
  }
  i32Load8U(offset: number): this {
    return this.op(0x2d, ...this.memarg(0, offset));
  }
  i32Store(offset: number): this {
    return this.op(0x36, ...this.memarg(2, offset));
  }
  i32Store8(offset: number): this {
    return this.op(0x3a, ...this.memarg(0, offset));
  }
  f64Store(offset: number): this {
    return this.op(0x39, ...this.memarg(3, offset));
  }

  // Numeric (§5.4.7).
  i32Const(value: number): this {
    return this.op(0x41, ...signedLeb(value));
  }
  i32Eqz(): this {
    return this.op(0x45);
  }
  i32LtU(): this {
    return this.op(0x49);
  }
  i32GeU(): this {
    return this.op(0x4f);
  }
  i32Add(): this {
    return this.op(0x6a);
  }
  i32Sub(): this {
    return this.op(0x6b);
  }
  i32GeS(): this {
    return this.op(0x4e);
  }
  i32Eq(): this {
    return this.op(0x46);
  }
  f64Lt(): this {
    return this.op(0x63);
  }
  f64Ne(): this {
    return this.op(0x62);
  }
  f64Const(value: number): this {
    const bytes = new Uint8Array(new Float64Array([value]).buffer);
    return this.op(0x44, ...bytes);
  }
  f64Min(): this {
    return this.op(0xa4);
  }
  f64Max(): this {
    return this.op(0xa5);
  }
  /** Parametric select (§5.4.3): c ? first : second, for [first, second, c] on the stack. */
  select(): this {
    return this.op(0x1b);
  }
  i32Mul(): this {
    return this.op(0x6c);
  }
  i32And(): this {
    return this.op(0x71);
  }
  i32Or(): this {
    return this.op(0x72);
  }
  i32Xor(): this {
    return this.op(0x73);
  }
  i32ShrU(): this {
    return this.op(0x76);
  }
  i32Shl(): this {
    return this.op(0x74);
  }
  f64Add(): this {
    return this.op(0xa0);
  }
  f64Sub(): this {
    return this.op(0xa1);
  }
  f64Mul(): this {
    return this.op(0xa2);
  }
  f64Div(): this {
    return this.op(0xa3);
  }
  f64ConvertI32S(): this {
    return this.op(0xb7);
  }
  i32TruncF64S(): this {
    return this.op(0xaa);
  }
  f64PromoteF32(): this {
    return this.op(0xbb);
  }

  // Vector (§5.4.8).
  v128Load(offset: number): this {
    return this.simd(0x00, ...this.memarg(4, offset));
  }
  v128Load32Splat(offset: number): this {
    return this.simd(0x09, ...this.memarg(2, offset));
  }
  v128Load64Splat(offset: number): this {
    return this.simd(0x0a, ...this.memarg(3, offset));
  }
  v128Store(offset: number): this {
    return this.simd(0x0b, ...this.memarg(4, offset));
  }
  v128Zero(): this {
    return this.simd(0x0c, ...new Array<number>(16).fill(0));
  }
  v128Or(): this {
    return this.simd(0x50);
  }
  v128AnyTrue(): this {
    return this.simd(0x53);
  }
  i32x4Bitmask(): this {
    return this.simd(0xa4);
  }
  f32x4Le(): this {
    return this.simd(0x45);
  }
  f32x4Add(): this {
    return this.simd(0xe4);
  }
  f32x4Sub(): this {
    return this.simd(0xe5);
  }
  f32x4Mul(): this {
    return this.simd(0xe6);
  }
  f64x2ExtractLane(lane: number): this {
    return this.simd(0x21, lane);
  }
  f64x2Add(): this {
    return this.simd(0xf0);
  }
  f64x2Mul(): this {
    return this.simd(0xf2);
  }
}

export interface FunctionSpec {
  readonly exportName: string;
  readonly params: readonly ValueType[];
  readonly results: readonly ValueType[];
  /** Locals after the parameters, in order. */
  readonly locals: readonly ValueType[];
  readonly body: FunctionBody;
}

/** A module importing `env.memory` and exporting the given functions. */
export function encodeModule(functions: readonly FunctionSpec[]): Uint8Array {
  const types = functions.map((f) => [0x60, ...vector(f.params.map((t) => [t])), ...vector(f.results.map((t) => [t]))]);
  const codes = functions.map((f) => {
    const localGroups: number[][] = [];
    for (const local of f.locals) {
      const last = localGroups[localGroups.length - 1];
      if (last !== undefined && last[1] === local) last[0]++;
      else localGroups.push([1, local]);
    }
    const code = [...vector(localGroups.map(([count, t]) => [...unsignedLeb(count), t])), ...f.body.bytes, 0x0b];
    return [...unsignedLeb(code.length), ...code];
  });
  return Uint8Array.from([
    0x00, 0x61, 0x73, 0x6d, 0x01, 0x00, 0x00, 0x00,
    ...section(1, vector(types)),
    ...section(2, vector([[...name("env"), ...name("memory"), 0x02, 0x00, 0x01]])),
    ...section(3, vector(functions.map((_, i) => unsignedLeb(i)))),
    ...section(7, vector(functions.map((f, i) => [...name(f.exportName), 0x00, ...unsignedLeb(i)]))),
    ...section(10, vector(codes)),
  ]);
}

/** The parts of the WebAssembly JavaScript API used here (TypeScript types it only in its DOM library). */
export interface WasmMemory {
  readonly buffer: ArrayBuffer;
}
interface WasmApi {
  Module: new (bytes: Uint8Array) => object;
  Instance: new (module: object, imports: object) => { readonly exports: Record<string, unknown> };
  Memory: new (descriptor: { initial: number }) => WasmMemory;
}
const wasm = (globalThis as unknown as { WebAssembly: WasmApi }).WebAssembly;

export type WasmFunction = (...args: number[]) => number;

/** A WebAssembly memory holds at most 65,536 pages of 64 KiB (4 GiB). */
export const WASM_MEMORY_LIMIT = 65_536 * 65_536;

/**
 * Compiles `module()` once (per `cache` entry) and instantiates it over a fresh memory of at least
 * `memoryBytes` bytes. Addresses above 2 GiB reach JavaScript as negative i32 values; callers
 * read pointers back with `>>> 0`.
 */
export function instantiate(module: () => Uint8Array, cache: { compiled?: object }, memoryBytes: number): { memory: WasmMemory; exports: Record<string, WasmFunction> } {
  cache.compiled ??= new wasm.Module(module());
  const memory = new wasm.Memory({ initial: Math.max(1, Math.ceil(memoryBytes / 65_536)) });
  const instance = new wasm.Instance(cache.compiled, { env: { memory } });
  return { memory, exports: instance.exports as Record<string, WasmFunction> };
}
