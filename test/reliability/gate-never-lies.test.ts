/**
 * The gate never lies: a recording read only in part, one shorter than the rule file asks,
 * one with no samples, and a channel no check could judge never pass; the reports are
 * written even when recordings cannot be read. Faults that need a moment in the middle of
 * a run (a file that shrinks or disappears after its header was read) are made exactly
 * then by a hook around openRecording, so the tests do not depend on timing.
 */
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { readFile, rm, truncate, unlink, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { XMLParser } from 'fast-xml-parser';
import { buildWav, fixtureDir, interleave, writeFixture, FORMAT_FLOAT } from '../helpers/wav-writer.js';
import { gaussian } from '../helpers/random.js';
import { runCli } from '../helpers/cli.js';

const hooks = vi.hoisted(() => ({ afterOpen: new Map<string, () => Promise<void>>() }));
vi.mock('../../src/readers/index.js', async (importOriginal) => {
  const original = await importOriginal<typeof import('../../src/readers/index.js')>();
  return {
    ...original,
    openRecording: async (path: string, options?: Parameters<typeof original.openRecording>[1]) => {
      const recording = await original.openRecording(path, options);
      const hook = hooks.afterOpen.get(path);
      if (hook) {
        hooks.afterOpen.delete(path); // once: worker sections reopen the file afterwards
        await hook();
      }
      return recording;
    },
  };
});

const fs = 1024;
let dir = '';
let rules = '';
const xml = new XMLParser({ ignoreAttributes: false, attributeNamePrefix: '' });

async function floatWav(name: string, channels: Float64Array[]): Promise<string> {
  return writeFixture(dir, name, buildWav({
    fmt: { formatTag: FORMAT_FLOAT, channels: channels.length, sampleRate: fs, bitsPerSample: 32 },
    data: interleave('float32', channels.map((c) => Array.from(c))),
  }));
}

beforeAll(async () => {
  dir = await fixtureDir('vibgate-never-lies-');
  rules = join(dir, 'lab.yaml');
  await writeFile(rules, [
    'format: 1',
    'name: lab-random',
    'checks:',
    '  non-finite: on',
    '  dropout: { max-seconds: 0.01 }',
    '  kurtosis: { whole: [2.4, 4], frames: [1.6, 8] }',
    'channels:',
    '  - match: { name: ch2 }',
    '    checks: { kurtosis: off, dropout: off, non-finite: off }',
    'expect:',
    '  min-duration-seconds: 20',
    '',
  ].join('\n'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('a recording read only in part fails the gate and says how much was read', () => {
  it('a WAV that shrinks after its header was read: exit 1, "only 65536 of 204800 sample frames were read"', async () => {
    const frames = 200 * fs;
    const path = await floatWav('shrinks.wav', [gaussian(frames, 1), gaussian(frames, 2)]);
    // cut the file in the middle of its data once the header has been read
    hooks.afterOpen.set(path, () => truncate(path, 44 + 100_000 * 8));
    const json = join(dir, 'shrinks.json');
    const junit = join(dir, 'shrinks.xml');
    const r = await runCli(['screen', path, '--rules', rules, '--jobs', '1', '--json', json, '--junit', junit]);
    expect(r.code).toBe(1);
    const message = `Cannot read "${path}": file became shorter while it was being read: only 65536 of ${frames} sample frames were read`;
    expect(r.stdout).toContain(message);
    const record = JSON.parse(await readFile(json, 'utf8'));
    expect(record.verdict).toBe('error');
    expect(record.recordings[0]).toMatchObject({ verdict: 'error', error: message });
    const suite = xml.parse(await readFile(junit, 'utf8')).testsuites.testsuite;
    expect(suite.testcase.name).toBe('(recording) / read');
    expect(suite.testcase.error.message).toBe(message);
  });

  // line 5000 is within the first MiB, read when the file is opened; line 80 000 is read
  // by the stream of blocks, after 79 998 rows went into the statistics
  it.each([5000, 80_000])('a CSV with a bad value on line %i: exit 1, naming the line', async (badLine) => {
    const path = join(dir, `bad-line-${badLine}.csv`);
    const lines = ['time [s],acc [g]'];
    const x = gaussian(100_000, 3);
    for (let i = 0; i < 100_000; i++) lines.push(`${(i / fs).toFixed(6)},${i === badLine - 2 ? 'overload' : x[i].toFixed(5)}`);
    await writeFile(path, lines.join('\n') + '\n');
    const json = join(dir, `bad-line-${badLine}.json`);
    const r = await runCli(['screen', path, '--rules', rules, '--json', json]);
    expect(r.code).toBe(1);
    const message = `Cannot read "${path}": line ${badLine}, column "acc": "overload" is not a number`;
    expect(r.stdout).toContain(message);
    const record = JSON.parse(await readFile(json, 'utf8'));
    expect(record.recordings[0]).toMatchObject({ verdict: 'error', error: message });
  });

  it('a recording that disappears after its header was read: exit 1, "no such file"', async () => {
    const path = await floatWav('vanishes.wav', [gaussian(30 * fs, 4)]);
    hooks.afterOpen.set(path, () => unlink(path));
    const r = await runCli(['screen', path, '--rules', rules, '--jobs', '1']);
    expect(r.code).toBe(1);
    expect(r.stdout).toContain(`Cannot read "${path}": no such file`);
  });

  it('a section a worker thread reads that is gone by then: the recording is unreadable, exit 1', async () => {
    // 16 channels × 300 000 frames: large enough to be split across threads
    const channels = Array.from({ length: 16 }, (_, c) => gaussian(300_000, 10 + c));
    const path = await writeFixture(dir, 'split.wav', buildWav({
      fmt: { formatTag: FORMAT_FLOAT, channels: 16, sampleRate: 10_000, bitsPerSample: 32 },
      data: interleave('float32', channels.map((c) => Array.from(c))),
    }));
    // keep this thread's first half readable; the worker's second half is cut off
    hooks.afterOpen.set(path, () => truncate(path, 44 + 160_000 * 64));
    const json = join(dir, 'split.json');
    const r = await runCli(['screen', path, '--rules', rules, '--jobs', '2', '--json', json]);
    expect(r.code).toBe(1);
    const record = JSON.parse(await readFile(json, 'utf8'));
    expect(record.recordings[0].verdict).toBe('error');
    // the worker reopened the file and found its data chunk cut short
    expect(record.recordings[0].error).toMatch(new RegExp(`^Cannot read ".*split\\.wav": "data" chunk at byte 36 is cut short: the file ends at byte ${44 + 160_000 * 64} but the chunk header declares it ends at byte ${44 + 300_000 * 64}$`));
  });
});

describe('a fault of vibgate\'s own while reading one recording', () => {
  it('fails that recording as unreadable (internal error), still screens the others and writes the reports: exit 1', async () => {
    const broken = await floatWav('bug.wav', [gaussian(30 * fs, 11)]);
    const fine = await floatWav('fine.wav', [gaussian(30 * fs, 12)]);
    hooks.afterOpen.set(broken, async () => {
      throw new TypeError('a reader bug');
    });
    const json = join(dir, 'bug.json');
    const r = await runCli(['screen', broken, fine, '--rules', rules, '--json', json]);
    expect(r.code).toBe(1);
    const record = JSON.parse(await readFile(json, 'utf8'));
    expect(record.recordings.map((x: { verdict: string }) => x.verdict)).toEqual(['error', 'pass']);
    expect(record.recordings[0].error).toBe(`Cannot screen "${broken}": internal error (TypeError: a reader bug); please report it`);
  });
});

describe('a recording that is too short or empty never passes', () => {
  it('a WAV with no samples fails the minimum duration: exit 1', async () => {
    const path = await floatWav('empty.wav', [new Float64Array(0), new Float64Array(0)]);
    const json = join(dir, 'empty.json');
    const r = await runCli(['screen', path, '--rules', rules, '--json', json]);
    expect(r.code).toBe(1);
    const record = JSON.parse(await readFile(json, 'utf8'));
    expect(record.recordings[0].verdict).toBe('fail');
    expect(record.recordings[0].findings).toContainEqual(expect.objectContaining({ check: 'min-duration', status: 'fail' }));
  });

  it('a WAV with no samples and no duration expected is not screened (skip), and the gate fails: exit 1', async () => {
    const path = await floatWav('empty2.wav', [new Float64Array(0)]);
    const noExpect = join(dir, 'no-expect.yaml');
    await writeFile(noExpect, 'format: 1\nname: loose\nchecks:\n  kurtosis: { whole: [2.4, 4] }\n');
    const json = join(dir, 'empty2.json');
    const r = await runCli(['screen', path, '--rules', noExpect, '--json', json]);
    expect(r.code).toBe(1);
    const record = JSON.parse(await readFile(json, 'utf8'));
    expect(record.verdict).toBe('skip');
    expect(record.recordings[0].channels[0].verdict).toBe('skip');
  });
});

describe('a channel no check judged is reported as not screened, never as passed', () => {
  it('a channel whose checks are all switched off is skip in the JSON record, and has no passing testcase', async () => {
    const path = await floatWav('two.wav', [gaussian(30 * fs, 5), gaussian(30 * fs, 6)]);
    const json = join(dir, 'two.json');
    const junit = join(dir, 'two.xml');
    const r = await runCli(['screen', path, '--rules', rules, '--json', json, '--junit', junit]);
    expect(r.code).toBe(0); // ch1 was judged and passed; ch2 was not judged, and says so
    const record = JSON.parse(await readFile(json, 'utf8'));
    expect(record.recordings[0].channels.map((c: { name: string; verdict: string }) => [c.name, c.verdict])).toEqual([['ch1', 'pass'], ['ch2', 'skip']]);
    const cases = xml.parse(await readFile(junit, 'utf8')).testsuites.testsuite.testcase as Array<{ name: string }>;
    expect(cases.filter((t) => t.name.startsWith('ch2 /'))).toEqual([]);
  });

  it('a channel of NaN only under shape checks: every finding and the channel are skip, never pass', async () => {
    const nan = new Float64Array(30 * fs).fill(Number.NaN);
    const path = await floatWav('nan.wav', [gaussian(30 * fs, 7), nan]);
    const shapeOnly = join(dir, 'shape-only.yaml');
    await writeFile(shapeOnly, 'format: 1\nname: shape\nchecks:\n  kurtosis: { whole: [2.4, 4] }\n  skewness: { whole: [-0.5, 0.5] }\n');
    const json = join(dir, 'nan.json');
    const r = await runCli(['screen', path, '--rules', shapeOnly, '--json', json]);
    const record = JSON.parse(await readFile(json, 'utf8'));
    const ch2 = record.recordings[0].channels[1];
    expect(ch2.findings.map((f: { status: string }) => f.status)).toEqual(['skip', 'skip']);
    expect(ch2.verdict).toBe('skip');
    expect(r.stdout).not.toMatch(/ch2\s+PASS/);
  });
});

describe('the reports are written even when some recordings cannot be read', () => {
  it('--junit, --json and --html all name the missing and the truncated recording, next to the clean one', async () => {
    const clean = await floatWav('clean.wav', [gaussian(30 * fs, 8)]);
    const truncated = join(dir, 'truncated.wav');
    await writeFile(truncated, (await readFile(clean)).subarray(0, 5000));
    const missing = join(dir, 'missing.wav');
    const out = { junit: join(dir, 'm.xml'), json: join(dir, 'm.json'), html: join(dir, 'm.html') };
    const r = await runCli(['screen', missing, truncated, clean, '--rules', rules, '--junit', out.junit, '--json', out.json, '--html', out.html]);
    expect(r.code).toBe(1);
    const record = JSON.parse(await readFile(out.json, 'utf8'));
    expect(record.recordings.map((x: { verdict: string }) => x.verdict)).toEqual(['error', 'error', 'pass']);
    expect(record.recordings[1].error).toBe(`Cannot read "${truncated}": "data" chunk at byte 36 is cut short: the file ends at byte 5000 but the chunk header declares it ends at byte ${44 + 30 * fs * 4}`);
    const suites = xml.parse(await readFile(out.junit, 'utf8')).testsuites.testsuite;
    expect(suites.map((s: { name: string }) => s.name)).toEqual([missing, truncated, clean]);
    expect(suites[1].testcase.error.message).toContain('is cut short');
    const html = await readFile(out.html, 'utf8');
    expect(html).toContain('no such file');
    expect(html).toContain('is cut short');
    expect(html.trimEnd().endsWith('</html>')).toBe(true);
  });
});
