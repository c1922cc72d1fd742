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

const memory = kernel ? new Float64Array(kernel.memory.buffer) : new Float64Array(0);
const dataIndex = DATA / 8;
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
  memory.set(x.subarray(from, from + even), dataIndex);
  let reps = kernel!.sums(DATA, even, K, prev, lo, hi);
  out[0] = memory[0]; out[1] = memory[1]; out[2] = memory[2]; out[3] = memory[3];
  out[4] = memory[4]; out[5] = memory[5]; out[6] = memory[6]; out[7] = memory[7];
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
