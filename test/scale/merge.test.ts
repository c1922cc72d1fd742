import { beforeAll, describe, expect, it } from 'vitest';
import { appendFile, readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { buildWav, fixtureDir, interleave, writeFixture, FORMAT_FLOAT } from '../helpers/wav-writer.js';
import { gaussian } from '../helpers/random.js';
import type { CliIo } from '../../src/cli/io.js';
import { runScreen } from '../../src/cli/screen.js';
import { readPartial, runMerge, runPartialScreen, runScreenShare, writePartial } from '../../src/cli/merge.js';
import { UsageError } from '../../src/errors.js';
import { loadRules } from '../../src/rules/load.js';
import { sectionBounds, segmentPlan } from '../../src/stats/segments.js';
import { summariseBlocks } from '../../src/stats/summarise.js';
import { openRecording } from '../../src/readers/index.js';
import { PARTIAL_FORMAT, PARTIAL_KIND, type PartialFile } from '../../src/stats/summary-file.js';
import { selectionOf } from '../../src/cli/shard.js';
import { tool } from '../../src/version.js';

function captureIo(): CliIo & { out: () => string; err: () => string } {
  let stdout = '';
  let stderr = '';
  return {
    stdout: { write: (s: string) => { stdout += s; return true; }, isTTY: false },
    stderr: { write: (s: string) => { stderr += s; return true; }, isTTY: false },
    env: { NO_COLOR: '1' },
    cwd: process.cwd(),
    out: () => stdout,
    err: () => stderr,
  };
}

const now = () => new Date('2026-01-02T03:04:05.000Z');
const fs = 1024;
/** Not a multiple of the frame hop or of 4: sections cut frames and runs in the middle. */
const N = 40 * fs + 37;
/** Section bounds of 4 sections of the big recording, on the segment stride (stats/segments.ts). */
const BOUNDS = sectionBounds(N, 4, segmentPlan(fs, N).strideSamples);

let dir = '';
let rules = '';
let big = '';
const small: string[] = [];

async function wav(name: string, channels: Float64Array[]): Promise<string> {
  return writeFixture(dir, name, buildWav({
    fmt: { formatTag: FORMAT_FLOAT, channels: channels.length, sampleRate: fs, bitsPerSample: 32 },
    data: interleave('float32', channels.map((c) => Array.from(c))),
  }));
}

/** 64 channels of Gaussian noise, some with the faults the checks look for. */
function sixtyFourChannels(): Float64Array[] {
  const channels = Array.from({ length: 64 }, (_, c) => gaussian(N, 100 + c, 1 + c / 64));
  const quarter = Math.floor(N / 4);
  channels[5].fill(0, quarter - 300, quarter + 300); // a dropout across the boundary of sections 1 and 2
  channels[9].fill(0.5); // constant: kurtosis NaN, runs as long as the record
  channels[13][2 * quarter] = NaN; // a non-finite sample on the boundary of sections 2 and 3
  channels[13][100] = Infinity;
  for (let i = 0; i < N; i++) channels[20][i] = Math.max(-1.5, Math.min(1.5, channels[20][i])); // flat tops at the extremes
  channels[30][3 * quarter - 1] = 14; // a spike just before the boundary of sections 3 and 4
  return channels;
}

beforeAll(async () => {
  dir = await fixtureDir('vibgate-scale-merge-');
  rules = join(dir, 'lab.yaml');
  await writeFile(rules, [
    'format: 1',
    'name: lab-random',
    'extends: [bundled:random-vibration]',
    'analysis: { frame-seconds: 0.5, overlap: 0.5 }',
    'expect: { min-duration-seconds: 30 }',
    '',
  ].join('\n'));
  big = await wav('big-64ch.wav', sixtyFourChannels());
  for (let k = 0; k < 5; k++) {
    const chans = [gaussian(35 * fs + k, 10 * k + 1), gaussian(35 * fs + k, 10 * k + 2), gaussian(35 * fs + k, 10 * k + 3)];
    if (k === 2) chans[1].fill(0, 5 * fs, 6 * fs);
    small.push(await wav(`run-${k}.wav`, chans));
  }
});

/**
 * Every number of two JSON values equal to `rel` relative, everything else identical. The
 * excess kurtosis G2 is a difference (β2 − 3 with a bias correction), so its rounding is
 * relative to the kurtosis it was computed from, not to its own, often tiny, value.
 */
function expectClose(a: unknown, b: unknown, rel: number, where = '$'): void {
  if (typeof a === 'number' && typeof b === 'number') {
    const scale = Math.max(Math.abs(a), Math.abs(b)) + (where.endsWith('.excessKurtosisG2') ? 3 : 0);
    if (Math.abs(a - b) > rel * scale) expect.fail(`${where}: ${a} vs ${b}`);
    return;
  }
  if (Array.isArray(a) && Array.isArray(b)) {
    expect(a.length, `${where}.length`).toBe(b.length);
    a.forEach((x, i) => expectClose(x, b[i], rel, `${where}[${i}]`));
    return;
  }
  if (a !== null && b !== null && typeof a === 'object' && typeof b === 'object') {
    expect(Object.keys(a), `${where} keys`).toEqual(Object.keys(b));
    for (const k of Object.keys(a)) expectClose((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], rel, `${where}.${k}`);
    return;
  }
  expect(a, where).toEqual(b);
}

/** The JUnit, JSON and HTML of a single `vibgate screen` run, the reference. */
async function singleRun(paths: string[], tag: string) {
  const out = { junit: join(dir, `${tag}-single.xml`), json: join(dir, `${tag}-single.json`), html: join(dir, `${tag}-single.html`) };
  const io = captureIo();
  const code = await runScreen(paths, { rules, ...out, jobs: 1, now }, io);
  return { code, junit: await readFile(out.junit, 'utf8'), json: JSON.parse(await readFile(out.json, 'utf8')), stdout: io.out() };
}

async function merged(parts: string[], tag: string) {
  const out = { junit: join(dir, `${tag}-merged.xml`), json: join(dir, `${tag}-merged.json`), html: join(dir, `${tag}-merged.html`) };
  const io = captureIo();
  const code = await runMerge(parts, io, { ...out, now });
  expect(io.err()).toBe('');
  return { code, junit: await readFile(out.junit, 'utf8'), json: JSON.parse(await readFile(out.json, 'utf8')), html: await readFile(out.html, 'utf8'), stdout: io.out() };
}

async function sectionJobs(paths: string[], count: number, tag: string, shards = 1): Promise<string[]> {
  const files: string[] = [];
  for (let s = 1; s <= shards; s++) {
    for (let i = 1; i <= count; i++) {
      const partial = join(dir, `${tag}-shard${s}-section${i}.json`);
      const io = captureIo();
      const code = await runPartialScreen(paths, {
        rules, partial, jobs: 1, now,
        ...(count > 1 ? { section: { index: i, count } } : {}),
        ...(shards > 1 ? { shard: { index: s, count: shards } } : {}),
      }, io);
      expect(code, io.err()).toBe(0);
      files.push(partial);
    }
  }
  return files;
}

describe('vibgate merge of the sections of one 64-channel recording', () => {
  it('gives the statistics of a single run to 1e-12, the same verdicts and the same JUnit', async () => {
    const single = await singleRun([big], 'big');
    const parts = await sectionJobs([big], 4, 'big');
    const whole = await merged(parts, 'big');
    expect(whole.code).toBe(single.code);
    expect(whole.json.verdict).toBe(single.json.verdict);
    // the fixture's faults make the gate fail, so the verdicts compared are not all "pass"
    expect(single.json.verdict).toBe('fail');
    const verdicts = (r: { recordings: Array<{ channels: Array<{ verdict: string; findings: Array<{ status: string }> }> }> }) =>
      r.recordings[0].channels.map((c) => [c.verdict, ...c.findings.map((f) => f.status)].join(' '));
    expect(verdicts(whole.json)).toEqual(verdicts(single.json));
    expect(new Set(verdicts(single.json).map((v) => v.split(' ')[0]))).toEqual(new Set(['pass', 'warn', 'fail']));
    expectClose(whole.json, single.json, 1e-12);
    expect(whole.junit).toBe(single.junit);
    expect(whole.stdout).toBe(single.stdout);
  });

  it('draws the HTML frame trends from the merged summaries, without waveform excerpts', async () => {
    const single = await readFile((await singleRun([big], 'html'), join(dir, 'html-single.html')), 'utf8');
    const parts = await sectionJobs([big], 4, 'html');
    const whole = await merged(parts, 'html');
    const count = (html: string, what: string) => html.split(what).length - 1;
    expect(count(whole.html, 'class="trend"')).toBeGreaterThan(0);
    expect(count(whole.html, 'class="trend"')).toBe(count(single, 'class="trend"'));
    // the single run reads excerpts from the recording; the merge leaves them out
    expect(count(single, 'class="excerpt"')).toBeGreaterThan(0);
    expect(count(whole.html, 'class="excerpt"')).toBe(0);
  });

  it('writes each section\'s frame range into its partial file, tiling the record', async () => {
    const parts = await sectionJobs([big], 4, 'ranges');
    const ranges = [];
    for (const p of parts) {
      const partial = await readPartial(p);
      ranges.push([partial.parts[0].section!.startFrame, partial.parts[0].section!.endFrame]);
    }
    // the rule file's checks need sampled segments (duplicate-channel, mains-hum ...): the
    // bounds fall on the segment stride, so no segment straddles two sections
    expect(ranges).toEqual([0, 1, 2, 3].map((k) => [BOUNDS[k], BOUNDS[k + 1]]));
    expect(BOUNDS.every((b, k) => k === 4 || b % segmentPlan(fs, N).strideSamples === 0)).toBe(true);
  });
});

describe('vibgate merge of shards', () => {
  it('of whole recordings, and of shards × sections, equals a single run over all of them', async () => {
    const missing = join(dir, 'gone.wav');
    const paths = [small[3], small[0], missing, small[4], small[2], small[1]];
    const single = await singleRun(paths, 'shards');
    expect(single.json.recordings.map((r: { verdict: string }) => r.verdict)).toContain('error');
    const byShard = await merged(await sectionJobs(paths, 1, 'shards', 3), 'shards');
    expect(byShard.code).toBe(1);
    expect(byShard.junit).toBe(single.junit);
    expectClose(byShard.json, single.json, 1e-12);
    const both = await merged(await sectionJobs(paths, 2, 'grid', 2), 'grid');
    expect(both.junit).toBe(single.junit);
    expectClose(both.json, single.json, 1e-12);
  });

  it('exits 0 when every recording passes, as screen does', async () => {
    const paths = [small[0], small[1]];
    const single = await singleRun(paths, 'clean');
    const parts = await merged(await sectionJobs(paths, 1, 'clean', 2), 'clean');
    expect(single.code).toBe(0);
    expect(parts.code).toBe(0);
  });
});

describe('vibgate merge with a recording that cannot be read from a given frame', () => {
  it('takes a CSV recording whole from the job of section 1, and the others leave it out', async () => {
    const x = gaussian(32 * fs, 77);
    const y = gaussian(32 * fs, 78);
    const lines = ['t,a,b', ...Array.from(x, (v, i) => `${i / fs},${v},${y[i]}`)];
    const csv = join(dir, 'slow.csv');
    await writeFile(csv, lines.join('\n') + '\n');
    const paths = [csv, small[0]];
    const single = await singleRun(paths, 'csv');
    const parts = await sectionJobs(paths, 3, 'csv');
    const held = await Promise.all(parts.map(async (p) => (await readPartial(p)).parts.map((q) => `${q.recording.path} ${q.section!.index}/${q.section!.count}`)));
    expect(held).toEqual([[`${csv} 1/1`, `${small[0]} 1/3`], [`${small[0]} 2/3`], [`${small[0]} 3/3`]]);
    const whole = await merged(parts, 'csv');
    expect(whole.junit).toBe(single.junit);
    expectClose(whole.json, single.json, 1e-12);
  });
});

describe('vibgate merge of more sections than the record has frames', () => {
  it('gives the single run\'s result, empty sections included', async () => {
    const tiny = await wav('tiny.wav', [Float64Array.from([0.1, -0.2, 0.3]), Float64Array.from([1, 1, 1])]);
    const single = await singleRun([tiny], 'tiny');
    const parts = await sectionJobs([tiny], 5, 'tiny');
    const sizes = await Promise.all(parts.map(async (p) => (await readPartial(p)).parts[0].summary!.samples));
    // on the segment stride (4096 at 1024 Hz) every inner bound of 3 frames is 0: the last
    // section takes them all
    expect(sizes).toEqual([0, 0, 0, 0, 3]);
    const whole = await merged(parts, 'tiny');
    expect(whole.junit).toBe(single.junit);
    expectClose(whole.json, single.json, 1e-12);
  });
});

describe('vibgate merge refuses parts that do not make up the campaign', () => {
  async function mergeError(parts: string[]) {
    const io = captureIo();
    const code = await runMerge(parts, io, { junit: join(dir, 'never.xml') });
    return { code, stderr: io.err() };
  }

  it('when a section job\'s file is missing', async () => {
    const parts = await sectionJobs([big], 4, 'gap');
    const r = await mergeError([parts[0], parts[1], parts[3]]);
    expect(r.code).toBe(2);
    expect(r.stderr).toBe(
      'vibgate: The partial file of the job run with --section 3/4 is missing: none of the 3 files given was written by it, so its recordings would go unjudged\n' +
        'vibgate: nothing was merged\n',
    );
  });

  it('when a shard job\'s file is missing', async () => {
    const parts = await sectionJobs(small, 1, 'shardgap', 3);
    const r = await mergeError([parts[0], parts[2]]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('The partial file of the job run with --shard 2/3 is missing');
  });

  it('when a recording\'s frames are in no part (a gap inside the record)', async () => {
    const parts = await sectionJobs([big], 2, 'hole');
    const second = JSON.parse(await readFile(parts[1], 'utf8'));
    second.parts = [];
    await writeFile(parts[1], JSON.stringify(second));
    const r = await mergeError(parts);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`vibgate: Frames [${sectionBounds(N, 2, segmentPlan(fs, N).strideSamples)[1]}, ${N}) of "${big}" are in none of the partial files given (a gap at the end of the record): is a section's file missing?\n`);
  });

  it('when the same job\'s file is given twice', async () => {
    const parts = await sectionJobs([big], 2, 'twice');
    const copy = join(dir, 'twice-copy.json');
    await writeFile(copy, await readFile(parts[1]));
    const r = await mergeError([...parts, copy]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`vibgate: "${parts[1]}" and "${copy}" were written by the same job (shard none, section 2/2); give each job's file once\n`);
  });

  it('when two sections overlap', async () => {
    // two hand-made jobs whose sections of one recording share frames 500..600
    const rec = await openRecording(small[0]);
    const resolved = await loadRules(rules);
    const summary = async (startFrame: number, endFrame: number) =>
      summariseBlocks(rec.blocks({ startFrame, endFrame }), rec, { ...resolved.analysis, start: startFrame });
    const total = rec.sampleCount!;
    const partial = (index: number, startFrame: number, endFrame: number, s: Awaited<ReturnType<typeof summary>>): PartialFile => ({
      kind: PARTIAL_KIND, format: PARTIAL_FORMAT, tool, createdAt: now().toISOString(),
      rules: { path: rules, sha256: resolved.files[0].sha256, files: resolved.files },
      analysis: resolved.analysis,
      job: { shard: null, section: { index, count: 2 } },
      selection: selectionOf([small[0]]),
      parts: [{
        order: 0,
        recording: { path: small[0], sha256: null, bytes: null, format: rec.format, sampleRate: rec.sampleRate, sampleCount: total, channels: rec.channels, notes: [] },
        section: { index, count: 2, startFrame, endFrame }, error: null, summary: s,
      }],
    });
    const a = join(dir, 'overlap-1.json');
    const b = join(dir, 'overlap-2.json');
    await writePartial(a, partial(1, 0, 600, await summary(0, 600)));
    await writePartial(b, partial(2, 500, total, await summary(500, total)));
    const r = await mergeError([a, b]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(
      `vibgate: Sections of "${small[0]}" overlap: section 1/2 in "${a}" covers frames [0, 600) and section 2/2 in "${b}" covers frames [500, ${total}); was a job's file given twice?\n`,
    );
  });

  it('when the rule file changed after the jobs ran', async () => {
    const own = join(dir, 'changing.yaml');
    await writeFile(own, await readFile(rules));
    const partial = join(dir, 'changing-part.json');
    expect(await runPartialScreen([small[0]], { rules: own, partial, jobs: 1 }, captureIo())).toBe(0);
    const before = (await readPartial(partial)).rules.sha256;
    await appendFile(own, '# a limit was edited here\n');
    const r = await mergeError([partial]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(
      new RegExp(`^vibgate: The rule file "${own.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}" has changed since the recordings were summarised: its SHA-256 is now [0-9a-f]{64}, the partial files were made with ${before}; merge with the rule file the jobs used\nvibgate: nothing was merged\n$`),
    );
  });

  it('when a recording changed between section jobs', async () => {
    const path = join(dir, 'rewritten.wav');
    await writeFile(path, await readFile(small[0]));
    const first = join(dir, 'rewritten-1.json');
    const second = join(dir, 'rewritten-2.json');
    expect(await runPartialScreen([path], { rules, partial: first, section: { index: 1, count: 2 }, jobs: 1 }, captureIo())).toBe(0);
    await writeFile(path, await readFile(small[1]));
    expect(await runPartialScreen([path], { rules, partial: second, section: { index: 2, count: 2 }, jobs: 1 }, captureIo())).toBe(0);
    const r = await mergeError([first, second]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(new RegExp(`^vibgate: "${first.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}" and ".*rewritten-2\\.json" describe different recordings under the path ".*rewritten\\.wav": SHA-256 "[0-9a-f]{64}" and "[0-9a-f]{64}"; were the jobs given different files\\?\n`));
  });

  it('when jobs were given different lists of recordings', async () => {
    const a = join(dir, 'list-1.json');
    const b = join(dir, 'list-2.json');
    await runPartialScreen(small, { rules, partial: a, shard: { index: 1, count: 2 }, jobs: 1 }, captureIo());
    await runPartialScreen(small.slice(1), { rules, partial: b, shard: { index: 2, count: 2 }, jobs: 1 }, captureIo());
    const r = await mergeError([a, b]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`vibgate: "${a}" and "${b}" were written for different lists of recordings: 5 recordings and 4 recordings; they cannot be merged\n`);
  });

  it('when a partial file is of another format version, or not one at all', async () => {
    const [part] = await sectionJobs([small[0]], 1, 'version');
    const data = JSON.parse(await readFile(part, 'utf8'));
    data.format = 2;
    await writeFile(part, JSON.stringify(data));
    const r = await mergeError([part]);
    expect(r.code).toBe(2);
    expect(r.stderr).toBe(
      `vibgate: Cannot read "${part}": it is a partial-summary file of format 2, but this vibgate reads format 1; merge with the vibgate version that wrote it\nvibgate: nothing was merged\n`,
    );
    const junk = join(dir, 'junit-by-mistake.json');
    await writeFile(junk, '{"testsuites": []}');
    expect((await mergeError([junk])).stderr).toContain(`vibgate: Cannot read "${junk}": not a vibgate partial-summary file (it has no "kind": "vibgate partial summary")\n`);
    expect((await mergeError([join(dir, 'nope.json')])).stderr).toContain(`vibgate: Cannot read "${join(dir, 'nope.json')}": no such file\n`);
  });
});

describe('vibgate screen with --shard, --section and --partial (runScreenShare)', () => {
  it('screens and judges only the shard\'s share without --partial', async () => {
    const json = join(dir, 'share-2of2.json');
    const io = captureIo();
    const code = await runScreenShare(small, { rules, json, jobs: 1, now, shard: { index: 2, count: 2 } }, io);
    const record = JSON.parse(await readFile(json, 'utf8'));
    // sorted run-0 .. run-4, dealt in turn: job 2 of 2 has run-1 and run-3 (clean), job 1 run-2 (a dropout)
    expect(record.recordings.map((r: { path: string }) => r.path)).toEqual([small[1], small[3]]);
    expect(code).toBe(0);
    const other = await runScreenShare(small, { rules, jobs: 1, shard: { index: 1, count: 2 } }, captureIo());
    expect(other).toBe(1); // run-2's dropout is in job 1's share
  });

  it('exits 0 with a note for a shard with no recordings', async () => {
    const io = captureIo();
    expect(await runScreenShare([small[0], small[1]], { rules, jobs: 1, shard: { index: 3, count: 3 } }, io)).toBe(0);
    expect(io.out()).toBe('Shard 3/3 has no recordings: 2 recordings were dealt to 3 jobs\n');
  });

  it('refuses --section without --partial, and report files with --partial', async () => {
    await expect(runScreenShare(small, { rules, section: { index: 1, count: 2 } }, captureIo())).rejects.toThrow(
      new UsageError('--section needs --partial FILE: a section of a recording cannot be judged alone; merge the sections with vibgate merge'),
    );
    await expect(runScreenShare(small, { rules, partial: join(dir, 'x.json'), junit: join(dir, 'x.xml'), github: true }, captureIo())).rejects.toThrow(
      new UsageError('--junit, --github cannot be used with --partial: the reports are written by vibgate merge, which judges the whole campaign'),
    );
  });

  it('writes a partial file with --partial, recording the job and the campaign', async () => {
    const partial = join(dir, 'share-partial.json');
    const io = captureIo();
    expect(await runScreenShare(small, { rules, partial, jobs: 1, shard: { index: 1, count: 2 }, section: { index: 2, count: 3 } }, io)).toBe(0);
    const file = await readPartial(partial);
    expect(file.job).toEqual({ shard: { index: 1, count: 2 }, section: { index: 2, count: 3 } });
    expect(file.selection).toEqual(selectionOf(small));
    expect(file.parts.map((p) => p.recording.path)).toEqual([small[0], small[2], small[4]]);
    expect(file.parts.map((p) => p.section!.index)).toEqual([2, 2, 2]);
    expect(io.out()).toContain(`${small[0]}: section 2/3 frames [`);
  });
});
