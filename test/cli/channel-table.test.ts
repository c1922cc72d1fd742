import { readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { runCli } from '../helpers/cli.js';
import { gaussian } from '../helpers/random.js';
import { buildWav, fixtureDir, interleave, writeFixture } from '../helpers/wav-writer.js';

let dir: string;
let runs: string[];

beforeAll(async () => {
  dir = await fixtureDir('vibgate-table-');
  runs = [];
  for (let k = 1; k <= 3; k++) {
    // 16-bit codes, RMS 0.2 of full scale
    const codes = (seed: number) => Array.from(gaussian(4096, seed, 0.2), (v) => Math.round(v * 32768));
    const channels = [codes(k), codes(10 + k)];
    runs.push(await writeFixture(dir, `deck-run${k}.wav`, buildWav({ fmt: { channels: 2, sampleRate: 1024, bitsPerSample: 16 }, data: interleave('int16', channels) })));
  }
  await writeFile(join(dir, 'campaign.csv'), [
    'recording,index,name,unit,sensor,full-scale,group',
    'deck-run*.wav,0,deck-n1-z,g,accelerometer,10,deck',
    'deck-run*.wav,1,deck-n2-z,g,accelerometer,10,deck',
    'deck-run3.wav,1,deck-n2-z-spare,,,,',
  ].join('\n'));
});

describe('--channel-table', () => {
  it('names, scales and groups the channels of every recording it matches', async () => {
    const json = join(dir, 'inspect.json');
    const r = await runCli(['inspect', '--channel-table', join(dir, 'campaign.csv'), '--format', 'json', ...runs]);
    expect(r.code).toBe(0);
    await writeFile(json, r.stdout);
    const out = JSON.parse(await readFile(json, 'utf8')) as { recordings: Array<{ channels: Array<{ name: string; unit: string | null; stats: { rms: number } }> }> };
    expect(out.recordings.map((rec) => rec.channels.map((c) => c.name))).toEqual([
      ['deck-n1-z', 'deck-n2-z'],
      ['deck-n1-z', 'deck-n2-z'],
      ['deck-n1-z', 'deck-n2-z-spare'], // a later row replaces the cells it fills in
    ]);
    // full-scale 10 g turns ±1 of 16-bit PCM into ±10 g: every RMS ten times the bare file's
    const bare = JSON.parse((await runCli(['inspect', '--format', 'json', ...runs])).stdout) as typeof out;
    out.recordings.forEach((rec, i) => rec.channels.forEach((c, j) => {
      expect(c.stats.rms / bare.recordings[i].channels[j].stats.rms).toBeCloseTo(10, 12);
    }));
  });

  it('gives way to a recording’s own sidecar, and says so', async () => {
    await writeFile(`${runs[0]}.channels.yaml`, 'channels:\n  - name: own-a\n  - name: own-b\n');
    const r = await runCli(['inspect', '--channel-table', join(dir, 'campaign.csv'), '--format', 'json', runs[0]]);
    expect(r.code).toBe(0);
    const out = JSON.parse(r.stdout) as { recordings: Array<{ notes: string[]; channels: Array<{ name: string }> }> };
    expect(out.recordings[0].channels.map((c) => c.name)).toEqual(['own-a', 'own-b']);
    expect(out.recordings[0].notes).toContain(`the sidecar "${runs[0]}.channels.yaml" describes this recording; the channel table's lines 2–3 were not used`);
  });

  it('refuses a table with a bad row before reading any recording', async () => {
    const bad = join(dir, 'bad.csv');
    await writeFile(bad, 'recording,index,name\ndeck-run*.wav,-1,x\n');
    const r = await runCli(['inspect', '--channel-table', bad, runs[1]]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(new RegExp(`^vibgate: Cannot read "${bad.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}": `));
  });
});

describe('screen --channel-table', () => {
  it('reads the table before any recording: a broken one is a setting error, exit 2', async () => {
    const bad = join(dir, 'bad-screen.csv');
    await writeFile(bad, 'recording,index,name\ndeck-run*.wav,x,acc\n');
    const r = await runCli(['screen', '--rules', 'bundled:random-vibration', '--channel-table', bad, runs[1]]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/^vibgate: Cannot read ".*bad-screen\.csv": 2:15 index: /);
    expect(r.stderr).toContain('vibgate: nothing was screened\n');
  });

  it('names the patterns that match none of the recordings given', async () => {
    const table = join(dir, 'two-days.csv');
    await writeFile(table, 'recording,index,name\ndeck-run*.wav,0,deck-a\nbridge-day9/*.wav,0,pier-a\n');
    const r = await runCli(['screen', '--rules', 'bundled:base', '--channel-table', table, runs[1], '-q']);
    expect(r.stderr).toBe(`vibgate: note: "${table}" line 3: the pattern "bridge-day9/*.wav" matches none of the recordings given\n`);
  });
});
