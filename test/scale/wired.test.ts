import { beforeAll, describe, expect, it } from 'vitest';
import { readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { execa } from 'execa';
import { buildWav, fixtureDir, interleave, writeFixture, FORMAT_FLOAT } from '../helpers/wav-writer.js';
import { gaussian } from '../helpers/random.js';
import { runCli } from '../helpers/cli.js';

const bin = fileURLToPath(new URL('../../dist/cli/bin.js', import.meta.url));
const fs = 1024;
let dir = '';
let rules = '';
const recs: string[] = [];

beforeAll(async () => {
  dir = await fixtureDir('vibgate-wired-');
  rules = join(dir, 'lab.yaml');
  await writeFile(rules, 'format: 1\nname: lab\nchecks:\n  non-finite: on\n  dropout: { max-seconds: 0.01 }\n');
  for (let k = 0; k < 5; k++) {
    const c = [gaussian(20 * fs, k + 1), gaussian(20 * fs, k + 11)];
    if (k === 3) c[1].fill(0, fs, 2 * fs);
    recs.push(await writeFixture(dir, `r${k}.wav`, buildWav({ fmt: { formatTag: FORMAT_FLOAT, channels: 2, sampleRate: fs, bitsPerSample: 32 }, data: interleave('float32', c.map((x) => Array.from(x))) })));
  }
});

describe('wired CLI', () => {
  it('screen --shard --partial, then merge, equals screen', async () => {
    const single = await runCli(['screen', ...recs, '--rules', rules, '--junit', join(dir, 's.xml'), '-j', '1']);
    const parts: string[] = [];
    for (let i = 1; i <= 3; i++) {
      for (let j = 1; j <= 2; j++) {
        const p = join(dir, `p${i}${j}.json`);
        const r = await runCli(['screen', ...recs, '--rules', rules, '--shard', `${i}/3`, '--section', `${j}/2`, '--partial', p, '-j', '1']);
        expect(r.code, r.stderr).toBe(0);
        parts.push(p);
      }
    }
    const merged = await runCli(['merge', ...parts, '--junit', join(dir, 'm.xml')]);
    expect(merged.code).toBe(single.code);
    expect(single.code).toBe(1);
    const strip = (x: string) => x.replace(/timestamp="[^"]*"/g, '');
    expect(strip(await readFile(join(dir, 'm.xml'), 'utf8'))).toBe(strip(await readFile(join(dir, 's.xml'), 'utf8')));
    const missing = await runCli(['merge', ...parts.slice(1)]);
    expect(missing.code).toBe(2);
    expect(missing.stderr).toContain('--shard 1/3 --section 1/2 is missing');
  });

  it('usage errors exit 2', async () => {
    expect((await runCli(['screen', recs[0], '--rules', rules, '--shard', '5/4'])).stderr).toBe('vibgate: --shard 5/4: the job number i must be between 1 and 4\n');
    const sec = await runCli(['screen', recs[0], '--rules', rules, '--section', '1/2']);
    expect(sec.code).toBe(2);
    expect(sec.stderr).toContain('--section needs --partial FILE');
    const both = await runCli(['screen', recs[0], '--rules', rules, '--partial', join(dir, 'x.json'), '--junit', join(dir, 'x.xml')]);
    expect(both.code).toBe(2);
    expect(both.stderr).toBe('vibgate: --junit cannot be used with --partial: the reports are written by vibgate merge, which judges the whole campaign\n');
    const run = await runCli(['run', recs[0], '--rules', rules]);
    expect(run.code).toBe(2);
  });

  it('run through the built bin passes the exit code and the paths', async () => {
    const script = join(dir, 'd.mjs');
    const got = join(dir, 'got.json');
    await writeFile(script, `import {writeFileSync} from 'node:fs'; writeFileSync(${JSON.stringify(got)}, JSON.stringify(process.argv.slice(2))); process.exit(4);\n`);
    const r = await execa('node', [bin, 'run', '--rules', rules, ...recs, '-j', '1', '--json', join(dir, 'run.json'), '--', 'node', script, '--x', '{}'], { reject: false });
    expect(r.exitCode, r.stderr).toBe(4);
    expect(JSON.parse(await readFile(got, 'utf8'))).toEqual(['--x', recs[0], recs[1], recs[2], recs[4]]);
    const rec = JSON.parse(await readFile(join(dir, 'run.json'), 'utf8'));
    expect(rec.heldBack).toEqual([recs[3]]);
    const help = await execa('node', [bin, 'screen', '--help']);
    expect(help.stdout).toContain('--partial');
  });
});
