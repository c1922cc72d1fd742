import { kernelWasmBase64 } from './kernel-wasm.js';

/**
 * The hot loop in WebAssembly SIMD (kernel.wat): power sums of x − K, extremes, repeated
 * neighbours and clip counts over a chunk of samples, about three times faster than the
 * same loop in JavaScript on this project's build machine. The chunk is copied into the
 * module's memory first (a memcpy). `available` is false where WebAssembly SIMD is not
 * supported; the JavaScript loop is then used.
 */
interface KernelExports {
  memory: { buffer: ArrayBuffer };
  sums(p: number, n: number, K: number, prev: number, lo: number, hi: number): number;
  deint_f32(src: number, dst: number, channels: number, frames: number): void;
  deint_i16(src: number, dst: number, channels: number, frames: number): void;
  deint_i24(src: number, dst: number, channels: number, frames: number): void;
  reserve(pages: number): number;
}

/** Byte offset of the sample area in the module's memory (results live at 0..63). */
const DATA = 1024;
/** Largest chunk, in samples, the sample area holds. */
export const KERNEL_CHUNK = 16384;

/** The few WebAssembly APIs used (the TypeScript lib for Node has no WebAssembly types). */
const wasmApi = (globalThis as unknown as {
  WebAssembly?: { Module: new (bytes: Uint8Array) => object; Instance: new (module: object) => { exports: unknown } };
}).WebAssembly;

let kernel: KernelExports | undefined;
try {
  const bytes = Buffer.from(kernelWasmBase64, 'base64');
  kernel = new wasmApi!.Instance(new wasmApi!.Module(bytes)).exports as KernelExports;
} catch {
  kernel = undefined;
}

export const available = kernel !== undefined && process.env.VIBGATE_NO_WASM === undefined;

let memory = kernel ? new Float64Array(kernel.memory.buffer) : new Float64Array(0);
const dataIndex = DATA / 8;
/** The module's memory as Float64Array, re-made after the memory grew. */
function heap(): Float64Array {
  if (memory.buffer !== kernel!.memory.buffer) memory = new Float64Array(kernel!.memory.buffer);
  return memory;
}

/**
 * Read buffers and decoded channel arrays inside the module's memory, so that a block is
 * read, deinterleaved (in WebAssembly) and summed (in place) without a copy. One arena per
 * thread at a time; `acquireArena` returns undefined when it is taken or unavailable.
 */
export interface BlockArena {
  /** Two read buffers of `frames × blockAlign` bytes (double buffering). */
  readBuffers: [Buffer, Buffer];
  /** One array of `frames` samples per channel; valid until `release`. */
  channels: Float64Array[];
  /** Deinterleaves read buffer k (its first `frames` sample frames) into `channels`. */
  decode(k: 0 | 1): void;
  release(): void;
}

let arenaBusy = false;
const ARENA_START = DATA + KERNEL_CHUNK * 8;
const align16 = (n: number) => Math.ceil(n / 16) * 16;

export function acquireArena(
  format: string, channelCount: number, frames: number, blockAlign: number,
): BlockArena | undefined {
  if (!kernel || !available || arenaBusy) return undefined;
  const decoder = format === 'float32' ? kernel.deint_f32 : format === 'int16' ? kernel.deint_i16 : format === 'int24' ? kernel.deint_i24 : undefined;
  if (!decoder) return undefined;
  const readBytes = align16(frames * blockAlign);
  const readA = ARENA_START;
  const readB = readA + readBytes;
  const out = readB + readBytes;
  const end = out + channelCount * frames * 8;
  if (end > 1.5 * 2 ** 30) return undefined; // keep well inside 32-bit addressing
  kernel.reserve(Math.ceil(end / 65536));
  const buffer = kernel.memory.buffer;
  heap();
  arenaBusy = true;
  return {
    readBuffers: [Buffer.from(buffer, readA, frames * blockAlign), Buffer.from(buffer, readB, frames * blockAlign)],
    channels: Array.from({ length: channelCount }, (_, c) => new Float64Array(buffer, out + c * frames * 8, frames)),
    decode: (k) => decoder(k === 0 ? readA : readB, out, channelCount, frames),
    release: () => {
      arenaBusy = false;
    },
  };
}
/**
 * Same contract as `sums`/`sumsWithClip` in channel-accumulator.ts: writes
 * [S1, S2, S3, S4, min, max, low count, high count] into `out`, returns the repeat count.
 * x[from..to) holds at most KERNEL_CHUNK samples.
 */
export function wasmSums(
  x: Float64Array, from: number, to: number, K: number, prev: number, lo: number, hi: number, out: Float64Array,
): number {
  const n = to - from;
  const even = n & ~1;
  const m = heap();
  let reps: number;
  if (x.buffer === m.buffer) {
    // an arena array: the samples are in the module's memory already
    reps = kernel!.sums(x.byteOffset + from * 8, even, K, prev, lo, hi);
  } else {
    m.set(x.subarray(from, from + even), dataIndex);
    reps = kernel!.sums(DATA, even, K, prev, lo, hi);
  }
  out[0] = m[0]; out[1] = m[1]; out[2] = m[2]; out[3] = m[3];
  out[4] = m[4]; out[5] = m[5]; out[6] = m[6]; out[7] = m[7];
  if (even < n) {
    // the odd last sample, as the JavaScript loop would treat it
    const v = x[to - 1];
    const p = even > 0 ? x[to - 2] : prev;
    if (v === p) reps++;
    const d = v - K;
    const d2 = d * d;
    out[0] += d; out[1] += d2; out[2] += d2 * d; out[3] += d2 * d2;
    if (v < out[4]) out[4] = v;
    if (v > out[5]) out[5] = v;
    if (v <= lo) out[6]++;
    else if (v >= hi) out[7]++;
  }
  return reps;
}
