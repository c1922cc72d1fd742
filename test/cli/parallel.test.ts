import { describe, expect, it } from 'vitest';
import { buildWav, fixtureDir, interleave, writeFixture, FORMAT_FLOAT } from '../helpers/wav-writer.js';
import { gaussian } from '../helpers/random.js';
import { openRecording } from '../../src/readers/index.js';
import { summariseRecording } from '../../src/cli/parallel.js';
import { channelStats } from '../../src/stats/channel-stats.js';

// Work split across threads must give the statistics of the whole record: sections are
// summarised by worker threads and merged with the exact merge formulas (references.md §1).
describe('summarising a recording on several threads', () => {
  it('gives the same summary with 1, 2 and 3 threads (to rounding of the merge formulas)', async () => {
    const dir = await fixtureDir('vibgate-parallel-');
    const channels = 16;
    const frames = 300_000; // 4.8 M samples: above the size worth splitting
    const data = Array.from({ length: channels }, (_, c) => {
      const x = gaussian(frames, 100 + c);
      x.fill(0, 123_456, 123_456 + 500); // a dropout that a section boundary may cut
      return Array.from(x);
    });
    const file = await writeFixture(dir, 'p.wav', buildWav({
      fmt: { formatTag: FORMAT_FLOAT, channels, sampleRate: 10_000, bitsPerSample: 32 },
      data: interleave('float32', data),
    }));
    const rec = await openRecording(file);
    const frameOptions = { frameSeconds: 0.7 };
    const one = await summariseRecording(rec, {}, frameOptions, { jobs: 1 });
    for (const jobs of [2, 3]) {
      const many = await summariseRecording(rec, {}, frameOptions, { jobs });
      expect(many.samples).toBe(one.samples);
      for (let c = 0; c < channels; c++) {
        const a = channelStats(one.channels[c], { sampleRate: 10_000 });
        const b = channelStats(many.channels[c], { sampleRate: 10_000 });
        for (const key of ['mean', 'std', 'rms', 'skewness', 'kurtosis', 'crestFactor'] as const) {
          expect(Math.abs(b[key] - a[key])).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(a[key])));
        }
        expect(b.min).toBe(a.min);
        expect(b.maxTimeS).toBe(a.maxTimeS);
        expect(b.longestZeroRun).toEqual(a.longestZeroRun);
        expect(b.frames!.used).toBe(a.frames!.used);
        expect(Math.abs(b.frames!.kurtosis.max - a.frames!.kurtosis.max)).toBeLessThan(1e-9);
      }
    }
  });
});
