import { describe, expect, it } from 'vitest';
import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { buildWav, fixtureDir, interleave, writeFixture, FORMAT_FLOAT } from '../helpers/wav-writer.js';
import { inspectRecording } from '../../src/cli/inspect.js';

// NIST StRD NumAcc1–4 read through the float64 paths (references.md §2: float32 cannot
// represent NumAcc3/4, so they go through a float64 WAV and a CSV file). Certified: mean as
// constructed, s = 1 (NumAcc1) or 0.1; tolerance 1e-12 relative for NumAcc1/2 and 1e-8
// for NumAcc3/4, whose decimal inputs are themselves rounded in float64.
function numAcc(first: number, low: number, high: number): number[] {
  const x = [first];
  for (let i = 0; i < 500; i++) x.push(low, high);
  return x;
}
const sets = [
  { name: 'NumAcc1', data: [10000001, 10000003, 10000002], mean: 10000002, s: 1, tol: 1e-12 },
  { name: 'NumAcc2', data: numAcc(1.2, 1.1, 1.3), mean: 1.2, s: 0.1, tol: 1e-12 },
  { name: 'NumAcc3', data: numAcc(1000000.2, 1000000.1, 1000000.3), mean: 1000000.2, s: 0.1, tol: 1e-8 },
  { name: 'NumAcc4', data: numAcc(10000000.2, 10000000.1, 10000000.3), mean: 10000000.2, s: 0.1, tol: 1e-8 },
];
const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

describe('NIST StRD NumAcc through float64 files', () => {
  for (const set of sets) {
    it(`${set.name} in a float64 WAV (one channel per dataset): mean and s certified`, async () => {
      const dir = await fixtureDir('vibgate-nist-');
      const file = await writeFixture(
        dir,
        `${set.name}.wav`,
        buildWav({
          fmt: { formatTag: FORMAT_FLOAT, channels: 1, sampleRate: 1000, bitsPerSample: 64 },
          data: interleave('float64', [set.data]),
        }),
      );
      const { result } = await inspectRecording(file, {});
      const st = result.channels[0].stats;
      expect(rel(st.mean, set.mean)).toBeLessThan(1e-15);
      expect(rel(st.stdSample, set.s)).toBeLessThan(set.tol);
    });

    it(`${set.name} in a CSV file with a time column: mean and s certified`, async () => {
      const dir = await fixtureDir('vibgate-nist-');
      const file = join(dir, `${set.name}.csv`);
      const rows = set.data.map((v, i) => `${(i / 1000).toFixed(3)},${v}`);
      await writeFile(file, ['time,value', ...rows].join('\n') + '\n');
      const { result } = await inspectRecording(file, {});
      expect(result.sampleRate).toBe(1000);
      const st = result.channels[0].stats;
      expect(rel(st.mean, set.mean)).toBeLessThan(1e-15);
      expect(rel(st.stdSample, set.s)).toBeLessThan(set.tol);
    });
  }
});
