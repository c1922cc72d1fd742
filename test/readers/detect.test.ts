import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import h5wasm from 'h5wasm/node';
import { beforeAll, describe, expect, it } from 'vitest';
import { openRecording } from '../../src/readers/index.js';
import { detectFormat, formats } from '../../src/readers/detect.js';
import { runCli } from '../helpers/cli.js';
import { gaussian } from '../helpers/random.js';
import { channelStats } from '../../src/stats/channel-stats.js';
import { summariseBlocks } from '../../src/stats/summarise.js';
import type { Recording } from '../../src/readers/types.js';
import { dataset151, dataset58, uffFile } from '../helpers/uff-writer.js';
import { buildWav, fixtureDir, FORMAT_FLOAT, interleave, writeFixture } from '../helpers/wav-writer.js';

/** Every channel's statistics, the recording streamed as screen streams it (0.5 s frames). */
async function statsOf(rec: Recording) {
  const summary = await summariseBlocks(rec.blocks({ blockFrames: 1000 }), rec, { frameSeconds: 0.5 });
  expect(summary.samples).toBe(4096);
  return summary.channels.map((c) => channelStats(c, { sampleRate: rec.sampleRate }));
}

let dir: string;
const x = gaussian(4096, 1);
const y = gaussian(4096, 2);

beforeAll(async () => {
  dir = await fixtureDir('vibgate-detect-');
  await h5wasm.ready;
});

describe('openRecording picks the reader by content first', () => {
  it('reads a UFF 58b file named .dat as UFF, to the statistics of the same samples as WAV float64', async () => {
    const bytes = uffFile(dataset151(), dataset58({ values: x, precision: 'double', name: 'mast-x', increment: 1 / 1024 }, { binary: {} }), dataset58({ values: y, precision: 'double', name: 'mast-y', increment: 1 / 1024 }, { binary: {} }));
    const file = await writeFixture(dir, 'tower-run.dat', bytes);
    const rec = await openRecording(file);
    expect(rec.format).toBe('uff58');
    expect(rec.channels.map((c) => c.name)).toEqual(['mast-x', 'mast-y']);
    const wav = await writeFixture(dir, 'tower-run.wav', buildWav({ fmt: { formatTag: FORMAT_FLOAT, channels: 2, sampleRate: 1024, bitsPerSample: 64 }, data: interleave('float64', [Array.from(x), Array.from(y)]) }));
    expect(await statsOf(rec)).toEqual(await statsOf(await openRecording(wav)));
  });

  it('reads an HDF5 file by its signature whatever its name, located by the sidecar', async () => {
    const file = join(dir, 'bridge-day2.bin');
    const h5 = new h5wasm.File(file, 'w');
    const data = new Float64Array(2 * 4096);
    for (let i = 0; i < 4096; i++) { data[2 * i] = x[i]; data[2 * i + 1] = y[i]; }
    h5.create_dataset({ name: 'accel', data, shape: [4096, 2], dtype: '<d' });
    h5.close();
    await writeFile(`${file}.channels.yaml`, 'sample-rate: 1024\nhdf5:\n  dataset: /accel\n  layout: samples-by-channels\nchannels:\n  - name: deck-a\n  - name: deck-b\n');
    const rec = await openRecording(file);
    expect(rec.format).toBe('hdf5');
    expect(rec.channels.map((c) => c.name)).toEqual(['deck-a', 'deck-b']);
    const wav = await writeFixture(dir, 'bridge-day2.wav', buildWav({ fmt: { formatTag: FORMAT_FLOAT, channels: 2, sampleRate: 1024, bitsPerSample: 64 }, data: interleave('float64', [Array.from(x), Array.from(y)]) }));
    expect(await statsOf(rec)).toEqual(await statsOf(await openRecording(wav)));
  });

  it('refuses a file whose content no reader knows, whatever its extension says', async () => {
    const file = await writeFixture(dir, 'notes.uff', new TextEncoder().encode('run 7 went well\n'));
    await expect(openRecording(file)).rejects.toThrow(`Cannot read "${file}": unknown format (content starts with "run ", extension ".uff")`);
  });

  it('recognises the HDF5 signature behind a 512-byte user block (HDF5 file format specification, superblock)', () => {
    const head = new Uint8Array(1024);
    head.set([0x89, 0x48, 0x44, 0x46, 0x0d, 0x0a, 0x1a, 0x0a], 512);
    expect(detectFormat(head, '.h5', false)).toBe('hdf5');
    expect(detectFormat(new Uint8Array(1024), '.csv', false)).toBe('csv');
    expect(detectFormat(new Uint8Array(1024), '.dat', true)).toBe('raw');
  });
});

describe('vibgate formats', () => {
  it('lists every format with its extensions and how it is recognised', async () => {
    const r = await runCli(['formats']);
    expect(r.code).toBe(0);
    for (const f of formats) {
      expect(r.stdout).toContain(f.description);
      expect(r.stdout).toContain(`recognised by ${f.recognisedBy}`);
    }
    expect(r.stdout.split('\n')[0]).toMatch(/^wav {4,}\.wav \.rf64 \.bw64 {2}WAV \(RIFF\)/);
  });
});
