import { describe, expect, it } from 'vitest';
import { mkdtemp, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { buildWav, interleave, writeFixture, FORMAT_FLOAT } from '../helpers/wav-writer.js';
import { gaussian } from '../helpers/random.js';
import { runCli } from '../helpers/cli.js';

describe('wiring', () => {
  it('keys new, screen --sign --ledger, verify', async () => {
    const dir = await mkdtemp(join(tmpdir(), 'audit-wire-'));
    const rec = await writeFixture(dir, 'a.wav', buildWav({ fmt: { formatTag: FORMAT_FLOAT, channels: 1, sampleRate: 1024, bitsPerSample: 32 }, data: interleave('float32', [Array.from(gaussian(20480, 1))]) }));
    const rules = join(dir, 'lab.yaml');
    await writeFile(rules, 'format: 1\nname: lab\nchecks:\n  non-finite: on\n');
    expect((await runCli(['keys', 'new', '--out', join(dir, 'lab')])).code).toBe(0);
    const s = await runCli(['screen', rec, '--rules', rules, '--json', join(dir, 'r.json'), '--junit', join(dir, 'j.xml'), '--sign', join(dir, 'lab.key'), '--ledger', join(dir, 'l.jsonl')]);
    console.log(s);
    const v = await runCli(['verify', join(dir, 'r.json'), '--key', join(dir, 'lab.pub'), '--ledger', join(dir, 'l.jsonl')]);
    console.log(v);
    expect(v.code).toBe(0);
    console.log(await runCli(['screen', rec, '--rules', rules, '--sign', join(dir, 'lab.pub')]));
    console.log(await runCli(['screen', rec, '--rules', rules, '--json', join(dir, 'x.json'), '--sign', join(dir, 'lab.pub')]));
    console.log(await runCli(['screen', rec, '--rules', rules, '--json', join(dir, 'nodir', 'x.json'), '--sign', join(dir, 'lab.key')]));
  });
});
