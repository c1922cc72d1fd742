#!/usr/bin/env node
// `npm run bench`: vibgate against what users use today, side by side in one run.
// Generates 64-channel, 25.6 kHz WAV files in the temp directory (float32, int24, int16;
// 10 s, 60 s and 300 s), then times, alternating runs: `vibgate inspect` (every statistic,
// 1 s frames), `vibgate screen` with rules/random-vibration.yaml, `sox FILE -n stats`, the
// numpy/scipy script bench/numpy_stats.py, and `cat FILE > /dev/null` (the page-cache read
// rate). Times are medians of the runs, peak RSS from GNU time (`/usr/bin/time -f %M`).
// Ratios, not absolute times, are what to compare: this machine is shared and noisy.
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { makeWav } from './make-wav.mjs';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const bin = join(root, 'dist', 'cli', 'bin.js');
const rules = join(root, 'rules', 'random-vibration.yaml');
const dir = join(tmpdir(), 'vibgate-bench');
mkdirSync(dir, { recursive: true });
const channels = 64;
const rate = 25600;
const runs = Number(process.env.BENCH_RUNS ?? 3);
const quick = process.argv.includes('--quick');

const has = (cmd) => spawnSync('sh', ['-c', `command -v ${cmd}`]).status === 0;
const hasSox = has('sox');
const hasNumpy = spawnSync('python3', ['-c', 'import numpy, scipy']).status === 0;
const hasTime = existsSync('/usr/bin/time');

function file(seconds, encoding) {
  const f = join(dir, `bench-${channels}ch-${seconds}s-${encoding}.wav`);
  if (!existsSync(f)) {
    process.stderr.write(`generating ${f} ...\n`);
    makeWav(f, channels, seconds, rate, encoding);
  }
  return f;
}

/** Runs a command once; returns wall seconds and peak RSS in MiB (when GNU time is there). */
function once(cmd, args, stdoutToNull = true) {
  const t0 = process.hrtime.bigint();
  let rss = null;
  if (hasTime) {
    const r = spawnSync('/usr/bin/time', ['-f', '%M', cmd, ...args], { encoding: 'utf8', stdio: ['ignore', stdoutToNull ? 'ignore' : 'pipe', 'pipe'], maxBuffer: 1 << 28 });
    const last = r.stderr.trim().split('\n').pop();
    rss = Number(last) / 1024;
  } else {
    spawnSync(cmd, args, { stdio: 'ignore' });
  }
  return { seconds: Number(process.hrtime.bigint() - t0) / 1e9, rss };
}

const median = (xs) => xs.slice().sort((a, b) => a - b)[Math.floor(xs.length / 2)];

function measure(cases, f) {
  const times = new Map(cases.map((c) => [c.name, []]));
  const rss = new Map(cases.map((c) => [c.name, 0]));
  for (let r = 0; r < runs; r++) {
    // alternate the tools within each round, so drifts of the machine hit all alike
    for (const c of cases) {
      const m = once(c.cmd, c.args(f));
      times.get(c.name).push(m.seconds);
      rss.set(c.name, Math.max(rss.get(c.name), m.rss ?? 0));
    }
  }
  return cases.map((c) => ({ name: c.name, seconds: median(times.get(c.name)), rss: rss.get(c.name) }));
}

const tools = [
  { name: 'vibgate inspect', cmd: process.execPath, args: (f) => [bin, 'inspect', f, '--format', 'json'] },
  { name: 'vibgate screen', cmd: process.execPath, args: (f) => [bin, 'screen', f, '--rules', rules, '--quiet'] },
  ...(hasSox ? [{ name: 'sox -n stats', cmd: 'sox', args: (f) => [f, '-n', 'stats'] }] : []),
  { name: 'cat > /dev/null', cmd: 'cat', args: (f) => [f] },
];
const numpy = hasNumpy ? [{ name: 'numpy/scipy script', cmd: 'python3', args: (f) => [join(root, 'bench', 'numpy_stats.py'), f] }] : [];

function table(title, rows) {
  console.log(`\n${title}`);
  const ref = (n) => rows.find((r) => r.name === n);
  const head = ['tool', 'time s', 'samples/s', '× sox', '× numpy', '× cat', 'peak RSS MiB'];
  const lines = rows.map((r) => {
    const sps = r.samplesTotal / r.seconds;
    const ratio = (n) => (ref(n) ? (ref(n).seconds / r.seconds).toFixed(2) : '–');
    return [r.name, r.seconds.toFixed(3), sps.toExponential(2), ratio('sox -n stats'), ratio('numpy/scipy script'), ratio('cat > /dev/null'), r.rss ? r.rss.toFixed(0) : '–'];
  });
  const w = head.map((h, i) => Math.max(h.length, ...lines.map((l) => l[i].length)));
  console.log(head.map((h, i) => h.padEnd(w[i])).join('  '));
  for (const l of lines) console.log(l.map((c, i) => (i === 0 ? c.padEnd(w[i]) : c.padStart(w[i]))).join('  '));
  console.log('(× columns: how many times faster than that reference, in this run)');
}

execFileSync(process.execPath, [join(root, 'node_modules', 'typescript', 'bin', 'tsc'), '-p', join(root, 'tsconfig.build.json')], { stdio: 'inherit' });
console.log(`vibgate benchmark: ${channels} channels at ${rate} Hz, median of ${runs} alternating runs; cores: ${(await import('node:os')).availableParallelism()}`);
console.log(`references: sox ${hasSox ? 'yes' : 'not installed'}, numpy/scipy ${hasNumpy ? 'yes' : 'not installed'}`);

const main = [['float32', 60], ['int24', 60], ['int16', 60]];
const results = {};
for (const [encoding, seconds] of quick ? [['float32', 10]] : main) {
  const f = file(seconds, encoding);
  const samplesTotal = channels * rate * seconds;
  const rows = measure([...tools, ...numpy], f).map((r) => ({ ...r, samplesTotal }));
  results[encoding] = rows;
  table(`${encoding}, ${seconds} s (${(statSync(f).size / 2 ** 20).toFixed(0)} MiB)`, rows);
}
if (!quick) {
  const f32 = results.float32.find((r) => r.name === 'vibgate inspect').seconds;
  const i24 = results.int24.find((r) => r.name === 'vibgate inspect').seconds;
  const i16 = results.int16.find((r) => r.name === 'vibgate inspect').seconds;
  console.log(`\nint24 / float32 time: ${(i24 / f32).toFixed(2)}; int16 / float32: ${(i16 / f32).toFixed(2)}`);

  console.log('\nScaling with record length (float32, vibgate inspect and sox):');
  for (const seconds of [10, 60, 300]) {
    const f = file(seconds, 'float32');
    const rows = measure(tools.filter((t) => t.name !== 'vibgate screen'), f);
    const v = rows.find((r) => r.name === 'vibgate inspect');
    const s = rows.find((r) => r.name === 'sox -n stats');
    console.log(
      `  ${String(seconds).padStart(3)} s: vibgate ${v.seconds.toFixed(2)} s (${((channels * rate * seconds) / v.seconds).toExponential(2)} samples/s, ` +
        `peak RSS ${v.rss?.toFixed(0) ?? '–'} MiB)` + (s ? `, sox ${s.seconds.toFixed(2)} s` : ''),
    );
  }
}
