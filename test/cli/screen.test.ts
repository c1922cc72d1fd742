import { describe, expect, it, beforeAll } from 'vitest';
import { existsSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { execa } from 'execa';
import { XMLParser } from 'fast-xml-parser';
import { Ajv2020 } from 'ajv/dist/2020.js';
import { buildWav, fixtureDir, interleave, writeFixture, FORMAT_FLOAT } from '../helpers/wav-writer.js';
import { gaussian } from '../helpers/random.js';
import { runCli } from '../helpers/cli.js';

const bin = fileURLToPath(new URL('../../dist/cli/bin.js', import.meta.url));
const recordSchema = JSON.parse(await readFile(new URL('../../schemas/record.schema.json', import.meta.url), 'utf8'));

const fs = 1024;
let dir = '';
let clean = '';
let faulty = '';
let spiky = '';
let rules = '';

async function wav(name: string, channels: Float64Array[]): Promise<string> {
  return writeFixture(dir, name, buildWav({
    fmt: { formatTag: FORMAT_FLOAT, channels: channels.length, sampleRate: fs, bitsPerSample: 32 },
    data: interleave('float32', channels.map((c) => Array.from(c))),
  }));
}

beforeAll(async () => {
  dir = await fixtureDir('vibgate-screen-');
  clean = await wav('clean.wav', [gaussian(30 * fs, 1), gaussian(30 * fs, 2)]);
  const dropped = gaussian(30 * fs, 3);
  dropped.fill(0, 10 * fs, 11 * fs);
  faulty = await wav('faulty.wav', [gaussian(30 * fs, 4), dropped]);
  const s = gaussian(30 * fs, 5);
  s[20 * fs] = 12; // 12 σ: frame kurtosis ≈ (3 + 12⁴/1024)/(1 + 144/1024)² ≈ 18, above 8: a warning below
  spiky = await wav('spiky.wav', [s, gaussian(30 * fs, 6)]);
  rules = join(dir, 'lab.yaml');
  await writeFile(rules, [
    'format: 1',
    'name: lab-random',
    'checks:',
    '  non-finite: on',
    '  dropout: { max-seconds: 0.01 }',
    '  kurtosis: { whole: [2.4, 4], frames: [1.6, 8], severity: warning }',
    'expect:',
    '  min-duration-seconds: 20',
    '',
  ].join('\n'));
});

describe('vibgate screen', () => {
  it('exits 0 on clean data and writes JUnit and a JSON record that validates', async () => {
    const junit = join(dir, 'ok.xml');
    const json = join(dir, 'ok.json');
    const r = await runCli(['screen', clean, '--rules', rules, '--junit', junit, '--json', json]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/^PASS/m);
    const record = JSON.parse(await readFile(json, 'utf8'));
    const ajv = new Ajv2020({ allErrors: true, strict: false });
    expect(ajv.validate(recordSchema, record), JSON.stringify(ajv.errors)).toBe(true);
    expect(record.verdict).toBe('pass');
    // the recording's hash is the plain SHA-256 of its bytes (what sha256sum prints)
    expect(record.recordings[0].sha256).toBe(createHash('sha256').update(await readFile(clean)).digest('hex'));
    expect(record.rules.sha256).toMatch(/^[0-9a-f]{64}$/);
    const xml = new XMLParser({ ignoreAttributes: false, attributeNamePrefix: '' }).parse(await readFile(junit, 'utf8'));
    const suite = xml.testsuites.testsuite;
    expect(suite.name).toBe(clean);
    // 2 channels × 3 checks + 1 recording expectation
    expect(suite.testcase).toHaveLength(7);
    expect(suite.testcase[0]).toMatchObject({ classname: clean, name: "(recording) / min-duration" });
    expect(suite.testcase[1]).toMatchObject({ classname: clean, name: "ch1 / non-finite" });
  });

  it('exits 1 when a channel fails, and the JUnit failure body locates it in time', async () => {
    const junit = join(dir, 'fail.xml');
    const r = await runCli(['screen', faulty, '--rules', rules, '--junit', junit]);
    expect(r.code).toBe(1);
    expect(r.stdout).toContain('dropout to zero');
    const text = await readFile(junit, 'utf8');
    const xml = new XMLParser({ ignoreAttributes: false, attributeNamePrefix: '' }).parse(text);
    const failed = xml.testsuites.testsuite.testcase.find((t: { name: string }) => t.name === 'ch2 / dropout');
    expect(failed.failure.message).toContain('1024 identical samples (1 s) of 0 at 10–11 s');
    expect(failed.failure['#text']).toContain('10–11 s');
  });

  it('exits 0 on warnings only, and 1 when they exceed --max-warnings', async () => {
    const r = await runCli(['screen', spiky, '--rules', rules]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/^WARN/m);
    const strict = await runCli(['screen', spiky, '--rules', rules, '--max-warnings', '0']);
    expect(strict.code).toBe(1);
    expect(strict.stderr).toBe('vibgate: 1 warnings, more than --max-warnings 0: the gate fails\n');
  });

  it('exits 1 when a recording is unreadable, still screens the others, and writes both outputs', async () => {
    const junit = join(dir, 'mixed.xml');
    const json = join(dir, 'mixed.json');
    const missing = join(dir, 'gone.wav');
    const r = await runCli(['screen', missing, clean, '--rules', rules, '--junit', junit, '--json', json]);
    expect(r.code).toBe(1);
    const record = JSON.parse(await readFile(json, 'utf8'));
    expect(record.recordings.map((x: { verdict: string }) => x.verdict)).toEqual(['error', 'pass']);
    expect(record.recordings[0].error).toBe(`Cannot read "${missing}": no such file`);
    const xml = new XMLParser({ ignoreAttributes: false, attributeNamePrefix: '' }).parse(await readFile(junit, 'utf8'));
    const first = xml.testsuites.testsuite[0];
    expect(first.testcase.name).toBe('(recording) / read');
    expect(first.testcase.error.message).toContain('no such file');
  });

  it('exits 1 when the record is shorter than the rule file expects', async () => {
    const short = await wav('short.wav', [gaussian(10 * fs, 7)]);
    const r = await runCli(['screen', short, '--rules', rules]);
    expect(r.code).toBe(1);
    expect(r.stdout).toContain('shorter than the 20 s the rule file expects');
  });

  it('exits 2 on a rule-file error, lists every problem, and writes no output', async () => {
    const bad = join(dir, 'bad.yaml');
    await writeFile(bad, 'format: 1\nname: x\nchecks:\n  kurtosiss: on\n  dropout: { max-seconds: -1 }\n');
    const junit = join(dir, 'never.xml');
    const r = await runCli(['screen', clean, '--rules', bad, '--junit', junit]);
    expect(r.code).toBe(2);
    expect(r.stderr.split('\n').filter(Boolean)).toEqual([
      expect.stringMatching(/^vibgate: .*bad\.yaml:4:3 checks\.kurtosiss: unknown check "kurtosiss"; did you mean "kurtosis"\?/),
      expect.stringMatching(/^vibgate: .*bad\.yaml:5:27 checks\.dropout\.max-seconds: must be ≥ 0, not -1$/),
      'vibgate: nothing was screened',
    ]);
    expect(existsSync(junit)).toBe(false);
  });

  it('keeps the exit-code contract through the built bin: 0, 1, 2', async () => {
    const run = (args: string[]) => execa('node', [bin, ...args], { reject: false, env: { NO_COLOR: '1' } });
    expect((await run(['screen', clean, '--rules', rules])).exitCode).toBe(0);
    expect((await run(['screen', faulty, '--rules', rules])).exitCode).toBe(1);
    expect((await run(['screen', join(dir, 'gone.wav'), '--rules', rules])).exitCode).toBe(1);
    expect((await run(['screen', clean])).exitCode).toBe(2); // --rules missing
    expect((await run(['screen', clean, '--rules', join(dir, 'nope.yaml')])).exitCode).toBe(2);
    const bad = await run(['screen', faulty, '--rules', rules]);
    expect(bad.stderr).not.toContain('    at ');
  });
});

describe('vibgate screen --github', () => {
  it('prints workflow annotations and appends a Markdown job summary to $GITHUB_STEP_SUMMARY', async () => {
    const summary = join(dir, 'summary.md');
    await writeFile(summary, 'earlier step\n');
    const r = await runCli(['screen', faulty, '--rules', rules, '--github'], { GITHUB_STEP_SUMMARY: summary });
    expect(r.code).toBe(1);
    const line = r.stdout.split('\n').find((l) => l.startsWith('::error '))!;
    expect(line).toContain('title=ch2 / dropout');
    expect(line).toContain(`file=${faulty.replace(/:/g, '%3A').replace(/,/g, '%2C')}`);
    const md = await readFile(summary, 'utf8');
    expect(md.startsWith('earlier step\n')).toBe(true);
    expect(md).toContain('dropout');
  });
});
