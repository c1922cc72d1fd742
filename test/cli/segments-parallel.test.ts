import { describe, expect, it } from 'vitest';
import { buildWav, fixtureDir, interleave, writeFixture, FORMAT_FLOAT } from '../helpers/wav-writer.js';
import { gaussian } from '../helpers/random.js';
import { openRecording } from '../../src/readers/index.js';
import { summariseRecording } from '../../src/cli/parallel.js';
import { formatPartialFile, parsePartialFile, type PartialFile } from '../../src/stats/summary-file.js';
import type { SegmentSummary } from '../../src/stats/segment-analyses.js';

/** Every number of two segment summaries agrees to `rel` (relative to the largest magnitude of its array). */
function expectClose(a: unknown, b: unknown, rel: number, where = 'segments'): void {
  if (typeof a === 'number' && typeof b === 'number') {
    if (Number.isNaN(a) || !Number.isFinite(a)) expect(Object.is(a, b) || a === b, where).toBe(true);
    else expect(Math.abs(a - b), where).toBeLessThanOrEqual(rel * Math.max(1, Math.abs(a)));
    return;
  }
  if (Array.isArray(a) && Array.isArray(b)) {
    expect(b.length, where).toBe(a.length);
    const scale = Math.max(1, ...a.map((v) => (typeof v === 'number' && Number.isFinite(v) ? Math.abs(v) : 0)));
    a.forEach((v, i) => {
      if (typeof v === 'number' && Number.isFinite(v)) expect(Math.abs(v - (b[i] as number)), `${where}[${i}]`).toBeLessThanOrEqual(rel * scale);
      else expectClose(v, b[i], rel, `${where}[${i}]`);
    });
    return;
  }
  if (a !== null && typeof a === 'object' && b !== null && typeof b === 'object') {
    expect(Object.keys(b).sort(), where).toEqual(Object.keys(a).sort());
    for (const k of Object.keys(a)) expectClose((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], rel, `${where}.${k}`);
    return;
  }
  expect(b, where).toEqual(a);
}

// Sections are snapped to the segment stride, so every way of cutting the record sees the
// same segments; their sums merge by adding (only the order of the additions differs).
describe('segment analyses on several threads', () => {
  it('give the same sums with 1, 2 and 3 threads, and survive a partial file', async () => {
    const dir = await fixtureDir('vibgate-seg-parallel-');
    const channels = 12;
    const fs = 4096;
    const frames = 400_000; // 4.8 M samples: split across threads
    const data = Array.from({ length: channels }, (_, c) => Array.from(gaussian(frames, 300 + c)));
    data[7] = data[2].slice(); // a duplicate for the cross sums to flag
    const file = await writeFixture(dir, 's.wav', buildWav({
      fmt: { formatTag: FORMAT_FLOAT, channels, sampleRate: fs, bitsPerSample: 32 },
      data: interleave('float32', data),
    }));
    const rec = await openRecording(file);
    const segments = { autocorrelation: true, cross: true, levels: true, lines: [{ fundamentalHz: 50, harmonics: 3 }] };
    const one = await summariseRecording(rec, {}, { frameSeconds: 1 }, { jobs: 1, segments });
    // 48 segments of 8192 fit; the budget of 2^18 samples takes every second one
    expect(one.segments!.plan).toEqual({ segmentSamples: 8192, strideSamples: 16384 });
    expect(one.segments!.used).toBe(24);
    for (const jobs of [2, 3]) {
      const many = await summariseRecording(rec, {}, { frameSeconds: 1 }, { jobs, segments });
      expect(many.segments!.used).toBe(one.segments!.used);
      expect(many.segments!.cross!.identical).toEqual(one.segments!.cross!.identical);
      expect(many.segments!.levels).toEqual(one.segments!.levels);
      expectClose(one.segments, many.segments, 1e-12);
    }
    const partial: PartialFile = {
      kind: 'vibgate partial summary', format: 1,
      tool: { name: 'vibgate', version: 'test' }, createdAt: '2026-12-02T00:00:00.000Z',
      rules: { path: 'r.yaml', sha256: 'x', files: [] }, analysis: { frameSeconds: 1, overlap: 0 },
      job: { shard: null, section: { index: 1, count: 1 } }, selection: { recordings: 1, sha256: 'y' },
      parts: [{
        order: 0,
        recording: { path: file, sha256: null, bytes: null, format: 'wav', sampleRate: fs, sampleCount: frames, channels: rec.channels, notes: [] },
        section: { index: 1, count: 1, startFrame: 0, endFrame: frames }, error: null, summary: one,
      }],
    };
    const back = parsePartialFile(formatPartialFile(partial), 'p.json').parts[0].summary!.segments as SegmentSummary;
    expect(back).toEqual(one.segments);
  });
});
