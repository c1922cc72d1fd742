import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { readFileSync } from 'node:fs';
import { available, wasmSums } from '../../src/stats/wasm/kernel.js';
import { sumsWithClip } from '../../src/stats/channel-accumulator.js';
import { gaussian } from '../helpers/random.js';
// @ts-expect-error: a plain .mjs script without type declarations
import { assemble, render } from '../../scripts/build-wasm.mjs';

// The WebAssembly SIMD loop against the JavaScript loop it replaces (same contract), on
// random chunks: equal counts and extremes, sums to rounding (two lanes sum in another order).
describe('WebAssembly kernel', () => {
  it('is available on Node 20 (WebAssembly SIMD)', () => expect(available).toBe(true));

  it('gives the same sums, extremes, repeat and clip counts as the JavaScript loop', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 1e6 }), fc.integer({ min: 0, max: 3000 }), fc.double({ min: -5, max: 5, noNaN: true }), fc.boolean(), (seed, n, K, quantise) => {
        const x = gaussian(n + 5, seed).map((v) => (quantise ? Math.round(v * 4) / 4 : v));
        const from = 3;
        const to = 3 + n;
        const a = new Float64Array(8);
        const b = new Float64Array(8);
        const ra = wasmSums(x, from, to, K, x[2], -1.5, 1.25, a);
        const rb = sumsWithClip(x, from, to, K, x[2], -1.5, 1.25, b);
        expect(ra).toBe(rb);
        expect([a[4], a[5], a[6], a[7]]).toEqual([b[4], b[5], b[6], b[7]]);
        for (let k = 0; k < 4; k++) expect(Math.abs(a[k] - b[k])).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(b[k])));
      }),
      { numRuns: 300, seed: 77 },
    );
  });

  it('lets a NaN through into the sums, so the caller takes its full loop', () => {
    const x = Float64Array.from([1, 2, NaN, 4]);
    const out = new Float64Array(8);
    wasmSums(x, 0, 4, 0, NaN, -Infinity, Infinity, out);
    expect(Number.isNaN(out[0])).toBe(true);
    expect([out[4], out[5]]).toEqual([1, 4]);
  });

  it('kernel-wasm.ts is what scripts/build-wasm.mjs assembles from kernel.wat now', async () => {
    const committed = readFileSync(new URL('../../src/stats/wasm/kernel-wasm.ts', import.meta.url), 'utf8');
    expect(committed).toBe(render(await assemble()));
  });
});
