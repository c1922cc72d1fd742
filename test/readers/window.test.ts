import { describe, expect, it } from 'vitest';
import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { buildWav, fixtureDir, interleave, writeFixture } from '../helpers/wav-writer.js';
import { openRecording } from '../../src/readers/index.js';
import { readWindow } from '../../src/readers/window.js';

// Sample k of channel c holds the code 100·c + k (mod 30000): the window's contents are known exactly.
const n = 5000;
const codes = (c: number) => Array.from({ length: n }, (_, k) => (100 * c + k) % 30000);

describe('reading a window of samples', () => {
  it('WAV: seeks to the window and returns exactly its samples', async () => {
    const dir = await fixtureDir('vibgate-window-');
    const file = await writeFixture(dir, 'w.wav', buildWav({ fmt: { channels: 3, sampleRate: 1000, bitsPerSample: 16 }, data: interleave('int16', [0, 1, 2].map(codes)) }));
    const rec = await openRecording(file);
    const [a, c] = await readWindow(rec, [0, 2], 1234, 1240);
    expect(Array.from(a, (v) => v * 32768)).toEqual([1234, 1235, 1236, 1237, 1238, 1239]);
    expect(Array.from(c, (v) => v * 32768)).toEqual([1434, 1435, 1436, 1437, 1438, 1439]);
  });

  it('clamps a window running past the end of the record', async () => {
    const dir = await fixtureDir('vibgate-window-');
    const file = await writeFixture(dir, 'w.wav', buildWav({ fmt: { channels: 1, sampleRate: 1000, bitsPerSample: 16 }, data: interleave('int16', [codes(0)]) }));
    const [a] = await readWindow(await openRecording(file), [0], 4998, 5100);
    expect(Array.from(a, (v) => v * 32768)).toEqual([4998, 4999]);
  });

  it('CSV (not seekable): reads up to the window and trims it', async () => {
    const dir = await fixtureDir('vibgate-window-');
    const file = join(dir, 'w.csv');
    await writeFile(file, 'a,b\n' + Array.from({ length: 300 }, (_, k) => `${k},${-k}`).join('\n') + '\n');
    const [b] = await readWindow(await openRecording(file, { sampleRate: 100 }), [1], 250, 253);
    expect(Array.from(b)).toEqual([-250, -251, -252]);
  });
});
