/**
 * `vibgate learn` end to end, on seeded simulations written as float WAV files with
 * sidecars in a temporary directory: repeated runs of one shaker random test on one set-up
 * (./shaker-runs.ts), four accelerometers of different character and the exciter's force.
 * Learn from 10 runs, then screen 10 other good runs and runs with injected faults with the
 * learned file through `vibgate screen`. Everything here is invented data made by seeded code.
 */
import { createHash } from 'node:crypto';
import { copyFile, mkdir, readFile, stat, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { loadRules } from '../../src/rules/load.js';
import { runCli } from '../helpers/cli.js';
import { buildWav, fixtureDir, FORMAT_FLOAT, interleave } from '../helpers/wav-writer.js';
import { Draw, injectFault, rmsOf, type FaultKind, type SimChannel } from '../helpers/simulate.js';
import { FS, MILD_FAULTS, SETUP, shakerRun as run } from './shaker-runs.js';

/** Writes a run as a float32 WAV and its sidecar (names, units, sensors, full scale where known). */
async function writeRun(path: string, channels: SimChannel[]): Promise<string> {
  await writeFile(path, buildWav({
    fmt: { formatTag: FORMAT_FLOAT, channels: channels.length, sampleRate: FS, bitsPerSample: 32 },
    data: interleave('float32', channels.map((c) => Array.from(c.x))),
  }));
  const sidecar = ['channels:'];
  for (const c of channels) {
    sidecar.push(`  - name: ${c.name}`, `    unit: ${c.unit}`, `    sensor: ${c.sensor}`);
    if (c.clipHigh !== undefined) sidecar.push(`    full-scale: ${c.clipHigh}`);
  }
  await writeFile(`${path}.channels.yaml`, sidecar.join('\n') + '\n');
  return path;
}

/** Faults a random test must not let through (the calibration test's list for random data). */
const FAULTS: FaultKind[] = [
  'spikes-one-sided', 'spikes-two-sided', 'loose-connector', 'clipping-both-full-scale', 'clipping-one-side',
  'clipping-both-unknown-range', 'dropout-zeros', 'stuck-converter', 'dead-channel', 'flat-channel', 'dc-offset',
  'drift-ramp', 'drift-thermal', 'rattle', 'burst', 'mains-hum', 'non-finite',
];

let dir = '';
let train: string[] = [];
let others: string[] = [];
const faulty: Array<{ path: string; fault: string; channel: string }> = [];
const mild: Array<{ path: string; fault: string; channel: string }> = [];
let learned = '';

interface RecordJson {
  recordings: Array<{ path: string; verdict: string; channels: Array<{ name: string; verdict: string; findings: Array<{ check: string; status: string }> }> }>;
}

async function screen(rules: string, paths: string[]): Promise<RecordJson> {
  const json = join(dir, `record-${createHash('sha256').update(rules + paths.join()).digest('hex').slice(0, 8)}.json`);
  const r = await runCli(['screen', '--rules', rules, '--json', json, '--quiet', ...paths]);
  expect(r.code === 0 || r.code === 1, r.stderr).toBe(true);
  return JSON.parse(await readFile(json, 'utf8')) as RecordJson;
}

beforeAll(async () => {
  dir = await fixtureDir('vibgate-learn-');
  await mkdir(join(dir, 'rec'));
  // the lab's base: the bundled random-vibration file, for the 30 s records of this set-up
  await writeFile(join(dir, 'lab-random.yaml'), [
    'format: 1',
    'name: lab-random',
    'extends: [bundled:random-vibration]',
    'expect: { min-duration-seconds: 30 }',
    '',
  ].join('\n'));
  train = await Promise.all(Array.from({ length: 10 }, (_, i) => writeRun(join(dir, 'rec', `train-${String(i + 1).padStart(2, '0')}.wav`), run(i + 1))));
  others = await Promise.all(Array.from({ length: 10 }, (_, i) => writeRun(join(dir, 'rec', `other-${String(i + 1).padStart(2, '0')}.wav`), run(500 + i))));
  // one recording per fault, on an accelerometer in turn, from another good run
  for (const [f, fault] of FAULTS.entries()) {
    const channels = run(500 + (f % 10));
    const k = f % 4;
    channels[k] = { ...injectFault(channels[k], fault, { fs: FS, seed: 9000 + f }), name: channels[k].name };
    faulty.push({ path: await writeRun(join(dir, 'rec', `fault-${fault}.wav`), channels), fault, channel: channels[k].name });
  }
  for (const [m, [fault, make]] of MILD_FAULTS.entries()) {
    for (let k = 0; k < 4; k++) {
      const channels = run(600 + 4 * m + k);
      const x = Float64Array.from(channels[k].x);
      make(x, rmsOf(x), new Draw(7000 + 10 * m + k));
      channels[k] = { ...channels[k], x };
      mild.push({ path: await writeRun(join(dir, 'rec', `mild-${fault}-${k + 1}.wav`), channels), fault, channel: channels[k].name });
    }
  }
  learned = join(dir, 'learned.yaml');
  const r = await runCli(['learn', ...train, '-o', learned, '--extends', join(dir, 'lab-random.yaml')]);
  expect(r.code, r.stderr).toBe(0);
  expect(r.stdout).toMatch(/^learned ".*learned\.yaml" from 10 recordings: \d+ limits written/);
});

describe('vibgate learn', () => {
  it('writes a rule file that loadRules reads and vibgate rules validate accepts, extending the lab base', async () => {
    const rules = await loadRules(learned);
    expect(rules.name).toBe('learned');
    expect(rules.files.map((f) => f.path.split('/').pop())).toEqual(['learned.yaml', 'lab-random.yaml', 'bundled:random-vibration', 'bundled:base.yaml']);
    // one channels: entry per channel name, after the bundled file's force entry
    expect(rules.channels.map((c) => c.match)).toEqual([{ sensor: 'force' }, ...SETUP.map((c) => ({ name: c.name }))]);
    const v = await runCli(['rules', 'validate', learned]);
    expect(v.code, v.stderr).toBe(0);
    const text = await readFile(learned, 'utf8');
    expect(text).toContain('extends: ["./lab-random.yaml"]');
    // reproducibility: no date and no tool version in the file
    expect(text).not.toMatch(/20\d\d-\d\d-\d\d|0\.1\.0|version/i);
  });

  it('screens 10 other good runs: all 50 channels pass; every injected fault fails its channel', async () => {
    const clean = await screen(learned, others);
    const cleanChannels = clean.recordings.flatMap((r) => r.channels);
    const cleanFailed = clean.recordings.flatMap((r) =>
      r.channels.filter((c) => c.verdict === 'fail').map((c) => `${r.path.split('/').pop()} ${c.name}: ${c.findings.filter((f) => f.status === 'fail').map((f) => f.check).join('+')}`),
    );
    const cleanWarned = cleanChannels.filter((c) => c.verdict === 'warn');
    const training = (await screen(learned, train)).recordings.flatMap((r) => r.channels);

    const record = await screen(learned, faulty.map((f) => f.path));
    const caughtBy: string[] = [];
    let caught = 0;
    for (const f of faulty) {
      const ch = record.recordings.find((r) => r.path === f.path)!.channels.find((c) => c.name === f.channel)!;
      if (ch.verdict === 'fail') caught++;
      caughtBy.push(`${f.fault}@${f.channel}: ${ch.findings.filter((x) => x.status === 'fail').map((x) => x.check).join('+') || ch.verdict}`);
    }
    console.log(
      `learn: 10 training runs (${training.filter((c) => c.verdict === 'fail').length} of ${training.length} channels fail when screened); ` +
        `10 other good runs: ${cleanFailed.length} of ${cleanChannels.length} channels fail (${cleanFailed.join('; ')}), ${cleanWarned.length} warn; ` +
        `injected faults: ${caught} of ${faulty.length} fail their channel\n  ${caughtBy.join('\n  ')}`,
    );
    expect(training.filter((c) => c.verdict === 'fail')).toEqual([]);
    expect(cleanChannels).toHaveLength(50);
    // One good run, seed 504, takes the narrow-band channel to kurtosis 3.69, beyond every
    // training value (2.82 … 3.09). Ten values cannot show a tail that long; the Gaussian
    // scatter floor of the learned spread (√(24·Σρ⁴/N) from the channel's autocorrelation,
    // Lomnicki 1961) can: learned from the values alone the limit was 3.6 and this run
    // failed it. calibration.test.ts gives the rate over 300 good channels.
    expect(cleanFailed).toEqual([]);
    expect(caught).toBe(FAULTS.length);
  });

  it('catches milder faults that the lab base alone lets through', async () => {
    const count = async (rules: string) => {
      const record = await screen(rules, mild.map((m) => m.path));
      return mild.filter((m) => record.recordings.find((r) => r.path === m.path)!.channels.find((c) => c.name === m.channel)!.verdict === 'fail').length;
    };
    const byLearned = await count(learned);
    const byBase = await count(join(dir, 'lab-random.yaml'));
    console.log(`learn: milder faults (3 % offset, 4× burst, 5× spikes, each on 4 channels): learned file fails ${byLearned} of ${mild.length}, the lab base alone ${byBase}`);
    // figures of this seeded simulation: 10 and 1 of 12. The two the learned file misses are
    // the burst on the narrow-band channel (its own level wanders as much) and the spikes on
    // acc-1 (crest factor 5.86 against a learned 6.27: 5 × the RMS is near the Gaussian extreme)
    expect(byLearned).toBeGreaterThanOrEqual(10);
    expect(byBase).toBeLessThanOrEqual(2);
  });

  it('keeps each recording\'s SHA-256 and its channels\' statistics in the evidence file', async () => {
    const evidence = JSON.parse(await readFile(`${learned}.evidence.json`, 'utf8'));
    expect(evidence.recordings.map((r: { path: string }) => r.path)).toEqual(train.map((p) => `rec/${p.split('/').pop()}`));
    // the SHA-256 of the file's bytes, as sha256sum prints it (node:crypto)
    expect(evidence.recordings[0].sha256).toBe(createHash('sha256').update(await readFile(train[0])).digest('hex'));
    // the statistics are the ones vibgate inspect reports for the same channel
    const inspected = JSON.parse((await runCli(['inspect', '--format', 'json', train[0]])).stdout);
    const acc2 = inspected.recordings[0].channels[1].stats;
    const learnedAcc2 = evidence.recordings[0].channels[1];
    expect(learnedAcc2.name).toBe('acc-2');
    expect(learnedAcc2.stats.kurtosis).toBe(acc2.kurtosis);
    expect(learnedAcc2.stats.frameKurtosisMax).toBe(acc2.frames.kurtosis.max);
    expect(learnedAcc2.stats.meanToStd).toBe(acc2.mean / acc2.std);
    expect(learnedAcc2.stats.crestFactor).toBe(acc2.crestFactor);
  });

  it('writes a byte-identical rule file and evidence for the same recordings in another order', async () => {
    const shuffled = [train[3], train[9], train[0], train[7], train[1], train[5], train[2], train[8], train[4], train[6]];
    const again = join(dir, 'learned-shuffled', 'learned.yaml');
    await mkdir(join(dir, 'learned-shuffled'));
    await copyFile(join(dir, 'lab-random.yaml'), join(dir, 'learned-shuffled', 'lab-random.yaml'));
    const first = join(dir, 'learned-ordered', 'learned.yaml');
    await mkdir(join(dir, 'learned-ordered'));
    await copyFile(join(dir, 'lab-random.yaml'), join(dir, 'learned-ordered', 'lab-random.yaml'));
    for (const [out, paths] of [[first, train], [again, shuffled]] as const) {
      const r = await runCli(['learn', ...paths, '-o', out, '--extends', join(dir, dirnameOf(out), 'lab-random.yaml')]);
      expect(r.code, r.stderr).toBe(0);
    }
    expect(await readFile(again, 'utf8')).toBe(await readFile(first, 'utf8'));
    expect(await readFile(`${again}.evidence.json`, 'utf8')).toBe(await readFile(`${first}.evidence.json`, 'utf8'));
  });

  it('--update with the same recordings changes nothing, and learning 6 then updating with 4 gives the file learning 10 at once gives', async () => {
    const before = await readFile(learned, 'utf8');
    const mtime = (await stat(learned)).mtimeMs;
    const same = await runCli(['learn', '--update', ...train.slice(2, 5), '-o', learned]);
    expect(same.code, same.stderr).toBe(0);
    expect(same.stdout).toMatch(/is unchanged: learned from 10 recordings \(0 new\)/);
    expect(same.stderr).toContain('already in the evidence: counted once');
    expect(await readFile(learned, 'utf8')).toBe(before);
    expect((await stat(learned)).mtimeMs).toBe(mtime);

    const stepwise = join(dir, 'learned-stepwise', 'learned.yaml');
    await mkdir(join(dir, 'learned-stepwise'));
    await copyFile(join(dir, 'lab-random.yaml'), join(dir, 'learned-stepwise', 'lab-random.yaml'));
    const r1 = await runCli(['learn', ...train.slice(0, 6), '-o', stepwise, '--extends', join(dir, 'learned-stepwise', 'lab-random.yaml')]);
    expect(r1.code, r1.stderr).toBe(0);
    const r2 = await runCli(['learn', '--update', ...train.slice(6), '-o', stepwise]);
    expect(r2.code, r2.stderr).toBe(0);
    expect(r2.stdout).toMatch(/from 10 recordings \(4 new\)/);
    expect(await readFile(stepwise, 'utf8')).toBe(await readFile(join(dir, 'learned-ordered', 'learned.yaml'), 'utf8'));
  });

  it('refuses to learn from fewer than 3 distinct recordings: exit 2, nothing written', async () => {
    const out = join(dir, 'too-few.yaml');
    const two = await runCli(['learn', train[0], train[1], '-o', out]);
    expect(two.code).toBe(2);
    expect(two.stderr).toBe(
      'vibgate: too little data: 2 distinct recordings; learning needs at least 3 known to be good ' +
        '(and 5 or more per group to learn with the margin as given)\nvibgate: nothing was written\n',
    );
    // the same file three times is one recording
    const once = await runCli(['learn', train[0], train[0], train[0], '-o', out]);
    expect(once.code).toBe(2);
    expect(once.stderr).toContain('vibgate: too little data: 1 distinct recording; learning needs at least 3');
    await expect(stat(out)).rejects.toThrow();
    await expect(stat(`${out}.evidence.json`)).rejects.toThrow();
  });

  it('with 3 or 4 recordings per group, warns, doubles the margin and keeps tighter base limits, and says so in the comments', async () => {
    const out = join(dir, 'few.yaml');
    const r = await runCli(['learn', ...train.slice(0, 4), '-o', out, '--extends', join(dir, 'lab-random.yaml')]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain('vibgate: warning: channel "acc-1": only 4 values per limit, fewer than 5: its limits are learned with the margin doubled (16)');
    const text = await readFile(out, 'utf8');
    expect(text).toContain('(margin doubled: only 4 values, fewer than 5)');
    expect(text).toMatch(/the base's, kept \(tighter than the learned/);
    await loadRules(out);
    // every training recording still passes
    const record = await screen(out, train.slice(0, 4));
    expect(record.recordings.flatMap((x) => x.channels).filter((c) => c.verdict === 'fail')).toEqual([]);
  });

  it('learns per sensor type and over all channels, leaving out what the base switches off', async () => {
    const bySensor = join(dir, 'by-sensor.yaml');
    const s = await runCli(['learn', ...train, '-o', bySensor, '--by', 'sensor', '--extends', join(dir, 'lab-random.yaml')]);
    expect(s.code, s.stderr).toBe(0);
    const sensorRules = await loadRules(bySensor);
    expect(sensorRules.channels.map((c) => c.match).slice(1)).toEqual([{ sensor: 'accelerometer' }, { sensor: 'force' }]);
    const sensorText = await readFile(bySensor, 'utf8');
    // random-vibration switches kurtosis, skewness, crest factor and symmetry off for force
    expect(sensorText).toContain('# kurtosis: not learned: the base switches it off for these channels.');
    // the force entry learns what the base still runs on it, and does not switch the rest back on
    const force = sensorRules.channels[2].checks;
    expect(Object.keys(force).sort()).toEqual(['frame-rms-spread', 'mean-offset']);

    const byAll = join(dir, 'by-all.yaml');
    const a = await runCli(['learn', ...train, '-o', byAll, '--by', 'all', '--extends', join(dir, 'lab-random.yaml')]);
    expect(a.code, a.stderr).toBe(0);
    const allRules = await loadRules(byAll);
    expect(allRules.channels).toHaveLength(1); // only the bundled force entry
    // pooled with the narrow-band channel, the whole-record kurtosis keeps the base's range
    // (the Gaussian scatter of that channel is wider than it); the frame range is learned
    expect(allRules.checks.kurtosis.options.frames).not.toEqual(
      (await loadRules(join(dir, 'lab-random.yaml'))).checks.kurtosis.options.frames,
    );
    expect(await readFile(byAll, 'utf8')).toContain('# kurtosis: learned without "force-1": the base switches it off for them.');
    for (const rules of [bySensor, byAll]) {
      const record = await screen(rules, others);
      const failed = record.recordings.flatMap((x) => x.channels.filter((c) => c.verdict === 'fail').map((c) => `${x.path.split('/').pop()} ${c.name}`));
      console.log(`learn --by ${rules === bySensor ? 'sensor' : 'all'}: 10 other good runs: ${failed.length} of 50 channels fail${failed.length ? ` (${failed.join(', ')})` : ''}`);
      expect(failed).toEqual([]);
    }
  });

  it('names an unreadable recording and writes nothing (exit 1)', async () => {
    const broken = join(dir, 'rec', 'broken.wav');
    await writeFile(broken, (await readFile(train[0])).subarray(0, 40));
    const out = join(dir, 'broken.yaml');
    const r = await runCli(['learn', ...train.slice(0, 4), broken, '-o', out]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(new RegExp(`^vibgate: Cannot read "${broken.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}": `, 'm'));
    expect(r.stderr).toContain('vibgate: 1 recording could not be read: nothing was learned, nothing was written');
    await expect(stat(out)).rejects.toThrow();
  });

  it('refuses to overwrite a learned file without --update or --force, and --update without evidence', async () => {
    const again = await runCli(['learn', ...train, '-o', learned]);
    expect(again.code).toBe(2);
    expect(again.stderr).toBe(`vibgate: "${learned}" exists: add recordings to it with --update, or replace it and its evidence with --force\nvibgate: nothing was written\n`);
    const lonely = join(dir, 'lonely.yaml');
    await writeFile(lonely, 'format: 1\nname: lonely\n');
    const update = await runCli(['learn', '--update', train[0], '-o', lonely]);
    expect(update.code).toBe(2);
    expect(update.stderr).toBe(
      `vibgate: Cannot update "${lonely}": its evidence file "${lonely}.evidence.json" does not exist (learn without --update first)\nvibgate: nothing was written\n`,
    );
  });

  it('warns of a training recording that fails a limit of the base that is not learned', async () => {
    const channels = run(42);
    channels[1] = { ...injectFault(channels[1], 'dropout-zeros', { fs: FS, seed: 4242 }), name: channels[1].name };
    const dropped = await writeRun(join(dir, 'rec', 'dropped.wav'), channels);
    const out = join(dir, 'with-dropout.yaml');
    const r = await runCli(['learn', ...train.slice(0, 9), dropped, '-o', out, '--extends', join(dir, 'lab-random.yaml')]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain(`vibgate: warning: "${dropped}", learned from, fails the learned file (limits of the base that are not learned): acc-2 / dropout`);
    expect(r.stderr).toContain('is it really a good recording?');
  });

  it('--update without recordings learns again from the evidence with a new margin', async () => {
    const out = join(dir, 'remargin', 'learned.yaml');
    await mkdir(join(dir, 'remargin'));
    await copyFile(join(dir, 'lab-random.yaml'), join(dir, 'remargin', 'lab-random.yaml'));
    expect((await runCli(['learn', ...train, '-o', out, '--extends', join(dir, 'remargin', 'lab-random.yaml')])).code).toBe(0);
    const r = await runCli(['learn', '--update', '-o', out, '--margin', '12']);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/from 10 recordings \(0 new\)/);
    const text = await readFile(out, 'utf8');
    expect(text).toContain('median ± 12 × spread');
    expect(JSON.parse(await readFile(`${out}.evidence.json`, 'utf8')).settings.margin).toBe(12);
  });

  it('refuses a damaged evidence file on --update, naming it (exit 2)', async () => {
    const out = join(dir, 'damaged.yaml');
    expect((await runCli(['learn', ...train.slice(0, 3), '-o', out])).code).toBe(0);
    const evidence = JSON.parse(await readFile(`${out}.evidence.json`, 'utf8'));
    evidence.recordings[2].channels[0].stats.kurtosis = 'n/a';
    await writeFile(`${out}.evidence.json`, JSON.stringify(evidence));
    const r = await runCli(['learn', '--update', train[5], '-o', out]);
    expect(r.code).toBe(2);
    expect(r.stderr).toBe(`vibgate: Cannot read "${out}.evidence.json": recordings[2].channels[0].stats.kurtosis: must be a number or null\nvibgate: nothing was written\n`);
  });

  it('refuses a base the learned file could not reach from its directory, unless --rules-root allows it', async () => {
    await mkdir(join(dir, 'elsewhere'));
    const out = join(dir, 'elsewhere', 'learned.yaml');
    const r = await runCli(['learn', ...train.slice(0, 3), '-o', out, '--extends', join(dir, 'lab-random.yaml')]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`vibgate: ${out}:`);
    expect(r.stderr).toContain('outside the directories rule files may come from');
    expect(r.stderr).toMatch(/the learned rule file would not load as written \(allow the base's directory with --rules-root DIR/);
    await expect(stat(out)).rejects.toThrow();
    const ok = await runCli(['learn', ...train.slice(0, 3), '-o', out, '--extends', join(dir, 'lab-random.yaml'), '--rules-root', dir]);
    expect(ok.code, ok.stderr).toBe(0);
    expect(await readFile(out, 'utf8')).toContain('extends: ["../lab-random.yaml"]');
  });

  it('refuses rms-level unless learned per channel, and an unknown check', async () => {
    const out = join(dir, 'levels.yaml');
    const r = await runCli(['learn', ...train, '-o', out, '--by', 'all', '--checks', 'kurtosis,rms-level']);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('--checks: rms-level is learned per channel only (--by channel)');
    const u = await runCli(['learn', ...train, '-o', out, '--checks', 'dropout']);
    expect(u.code).toBe(2);
    expect(u.stderr).toContain('--checks: "dropout" is not a check that can be learned');
    const ok = await runCli(['learn', ...train, '-o', out, '--checks', 'rms-level', '--extends', join(dir, 'lab-random.yaml')]);
    expect(ok.code, ok.stderr).toBe(0);
    const entry = (await loadRules(out)).channels.find((c) => (c.match.name as string) === 'acc-4')!;
    const levels = entry.checks['rms-level'] as { min: number; max: number };
    // acc-4: nominal 0.8 g, each run within ±25 % (the simulation); the limits lie around that
    expect(levels.min).toBeLessThan(0.8 * 0.8);
    expect(levels.max).toBeGreaterThan(0.8 * 1.25);
  });
});

function dirnameOf(path: string): string {
  return path.split('/').slice(-2, -1)[0];
}
