/**
 * Through the built bin (`node dist/cli/bin.js`), as a CI job runs it: inputs are never
 * modified and are opened read-only; a run killed while it writes never leaves a
 * half-written report at the target; SIGINT and SIGTERM end a run with 130 and 143 and
 * no reports, and no temporary files.
 *
 * The suite may run as root, where chmod 0444 does not stop a write. So besides hashes
 * and modification times, a preload module records every file-system call the process
 * (and its worker threads) makes, and the test checks that inputs were only ever opened
 * for reading.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { existsSync, readdirSync, readlinkSync, watch } from 'node:fs';
import { chmod, mkdir, readFile, rm, stat, writeFile } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { execa, type ResultPromise } from 'execa';
import { buildWav, fixtureDir, interleave, writeFixture, FORMAT_FLOAT } from '../helpers/wav-writer.js';
import { gaussian } from '../helpers/random.js';

const bin = fileURLToPath(new URL('../../dist/cli/bin.js', import.meta.url));
let dir = '';
let rules = '';
let base = '';
let wav = '';
let csv = '';
let raw = '';
let big = '';

/** Records every call that can open, write, move or remove a file, one JSON line each. */
const SPY = `
import fs from 'node:fs';
import fsp from 'node:fs/promises';
import { syncBuiltinESMExports } from 'node:module';
const log = process.env.VIBGATE_FS_LOG;
let busy = false;
const record = (op, path, flags) => {
  if (busy || typeof path !== 'string' && !(path instanceof URL) && !Buffer.isBuffer(path)) return;
  busy = true;
  try { fs.appendFileSync(log, JSON.stringify({ op, path: String(path), flags: flags === undefined ? 'r' : String(flags) }) + '\\n'); } finally { busy = false; }
};
const wrap = (target, name, flagsAt) => {
  const original = target[name];
  if (typeof original !== 'function') return;
  target[name] = function (...args) {
    const a = flagsAt === undefined ? undefined : args[flagsAt];
    // readFile's second argument is an encoding or an options object with an optional flag
    const f = flagsAt === undefined ? name : name.startsWith('readFile') ? (typeof a === 'object' && a !== null ? a.flag : undefined) : (typeof a === 'object' && a !== null ? a.flags : a);
    record(name, args[0], f);
    return original.apply(this, args);
  };
};
for (const t of [fs, fsp]) {
  wrap(t, 'open', 1); wrap(t, 'readFile', 1);
  for (const n of ['writeFile', 'appendFile', 'truncate', 'rename', 'unlink', 'rm', 'chmod', 'utimes', 'copyFile', 'cp', 'lutimes', 'lchown', 'chown']) wrap(t, n);
}
for (const n of ['openSync', 'readFileSync']) wrap(fs, n, 1);
for (const n of ['writeFileSync', 'appendFileSync', 'truncateSync', 'renameSync', 'unlinkSync', 'rmSync', 'chmodSync', 'utimesSync', 'createWriteStream']) wrap(fs, n);
wrap(fs, 'createReadStream', 1);
syncBuiltinESMExports();
`;

async function sha256(path: string): Promise<string> {
  return createHash('sha256').update(await readFile(path)).digest('hex');
}

beforeAll(async () => {
  dir = await fixtureDir('vibgate-bin-');
  await mkdir(join(dir, 'rules'));
  base = join(dir, 'rules', 'base.yaml');
  await writeFile(base, 'format: 1\nname: base\nchecks:\n  non-finite: on\n  dropout: { max-seconds: 0.01 }\n');
  rules = join(dir, 'rules', 'lab.yaml');
  await writeFile(rules, 'format: 1\nname: lab\nextends: ./base.yaml\nchecks:\n  kurtosis: { whole: [2.4, 4] }\n');
  wav = await writeFixture(dir, 'run1.wav', buildWav({
    fmt: { formatTag: FORMAT_FLOAT, channels: 2, sampleRate: 1024, bitsPerSample: 32 },
    data: interleave('float32', [Array.from(gaussian(30 * 1024, 1)), Array.from(gaussian(30 * 1024, 2))]),
  }));
  await writeFile(`${wav}.channels.yaml`, 'channels:\n  - name: acc-01\n    unit: g\n  - name: acc-02\n    unit: g\n');
  csv = join(dir, 'run2.csv');
  const x = gaussian(20 * 512, 3);
  await writeFile(csv, 'time [s],mic [Pa]\n' + Array.from(x, (v, i) => `${(i / 512).toFixed(6)},${v.toFixed(5)}`).join('\n') + '\n');
  raw = join(dir, 'run3.bin');
  await writeFile(raw, Buffer.from(new Float32Array(gaussian(10 * 1000, 4)).buffer));
  await writeFile(`${raw}.channels.yaml`, 'sample-rate: 1000\nraw:\n  encoding: float32le\n  channels: 1\n');
  // 32 channels × 120 s at 2048 Hz, float32: 31 MB, screened many times over in the signal tests
  big = await writeFixture(dir, 'big.wav', buildWav({
    fmt: { formatTag: FORMAT_FLOAT, channels: 32, sampleRate: 2048, bitsPerSample: 32 },
    data: interleave('float32', Array.from({ length: 32 }, (_, c) => Array.from(gaussian(120 * 2048, 20 + c)))),
  }));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

const run = (args: string[], env: Record<string, string> = {}, nodeArgs: string[] = []) =>
  execa('node', [...nodeArgs, bin, ...args], { reject: false, env: { NO_COLOR: '1', ...env } });

describe('vibgate screen never modifies its inputs', () => {
  it('leaves every recording, sidecar and rule file byte for byte and with its modification time, and opens them read-only', async () => {
    const inputs = [wav, `${wav}.channels.yaml`, csv, raw, `${raw}.channels.yaml`, rules, base];
    const before = new Map<string, { hash: string; mtimeMs: number; mode: number }>();
    for (const path of inputs) {
      await chmod(path, 0o444); // stops a write for any user but root
      const info = await stat(path);
      before.set(path, { hash: await sha256(path), mtimeMs: info.mtimeMs, mode: info.mode });
    }
    const spy = join(dir, 'fs-spy.mjs');
    await writeFile(spy, SPY);
    const log = join(dir, 'fs.log');
    await writeFile(log, '');
    const out = join(dir, 'out-inputs');
    await mkdir(out);
    const r = await run(
      ['screen', wav, csv, raw, '--rules', rules, '--junit', join(out, 'j.xml'), '--json', join(out, 'r.json'), '--html', join(out, 'r.html')],
      { VIBGATE_FS_LOG: log },
      ['--import', spy],
    );
    expect(r.stderr).toBe('');
    expect(r.exitCode).toBe(0);
    for (const path of inputs) {
      const info = await stat(path);
      expect({ hash: await sha256(path), mtimeMs: info.mtimeMs, mode: info.mode }, path).toEqual(before.get(path));
    }
    const calls = (await readFile(log, 'utf8')).trim().split('\n').map((l) => JSON.parse(l) as { op: string; path: string; flags: string });
    const absoluteInputs = new Set(inputs.map((p) => resolve(p)));
    const onInputs = calls.filter((c) => absoluteInputs.has(resolve(c.path)));
    // the spy saw the inputs being read (else it proves nothing) ...
    for (const path of inputs) expect(onInputs.some((c) => resolve(c.path) === path), `${path} was read`).toBe(true);
    // ... and every call on them was an open or read for reading only
    for (const c of onInputs) {
      expect(['open', 'openSync', 'readFile', 'readFileSync', 'createReadStream'], JSON.stringify(c)).toContain(c.op);
      expect(['r', 'undefined'], JSON.stringify(c)).toContain(c.flags);
    }
    // the reports went to the output directory, and nothing else was written there
    expect(readdirSync(out).sort()).toEqual(['j.xml', 'r.html', 'r.json']);
  });
});

describe('a worker thread that dies while it reads its section', () => {
  // A preload module that runs in every thread kills the worker threads only: the
  // recording (big enough to be split across two threads) must be reported unreadable.
  it.each([
    ['exits', 'process.exit(3);', 'a worker thread stopped (exit code 3) before it had read its share'],
    ['throws', "throw new Error('worker fault injected by the test');", 'a worker thread failed while reading it: worker fault injected by the test'],
  ])('a worker that %s: the recording is unreadable, the run goes on, exit 1', async (_how, body, detail) => {
    const preload = join(dir, `worker-dies-${_how}.mjs`);
    await writeFile(preload, `import { isMainThread } from 'node:worker_threads';\nif (!isMainThread) { ${body} }\n`);
    const out = join(dir, `out-worker-${_how}`);
    await mkdir(out);
    const json = join(out, 'r.json');
    const r = await run(['screen', big, wav, '--rules', rules, '--jobs', '2', '--json', json], {}, ['--import', preload]);
    expect(r.exitCode).toBe(1);
    const record = JSON.parse(await readFile(json, 'utf8'));
    expect(record.recordings.map((x: { verdict: string }) => x.verdict)).toEqual(['error', 'pass']);
    expect(record.recordings[0].error).toBe(`Cannot read "${big}": ${detail}`);
    expect(r.stderr).not.toMatch(/\n\s+at /);
  });
});

describe('vibgate screen | head', () => {
  it('a reader of stdout that goes away does not turn a passing run into a crash: exit 0, no stack trace', async () => {
    const child = execa('node', [bin, 'screen', wav, '--rules', rules], { reject: false, env: { NO_COLOR: '1' } });
    child.stdout!.destroy(); // as `| head -0` does: the pipe's reading end is closed
    const r = await child;
    expect(r.stderr).toBe('');
    expect(r.exitCode).toBe(0);
  });
});

/** Resolves once `child` has `path` open (Linux /proc), or when it has exited. */
async function untilOpen(child: ResultPromise, path: string): Promise<boolean> {
  const fdDir = `/proc/${child.pid}/fd`;
  for (;;) {
    if (child.exitCode !== null) return false;
    try {
      for (const fd of readdirSync(fdDir)) {
        try {
          if (readlinkSync(join(fdDir, fd)) === path) return true;
        } catch {
          // the descriptor closed while we looked
        }
      }
    } catch {
      return false; // the process is gone
    }
    await new Promise((r) => setTimeout(r, 2));
  }
}

describe.runIf(process.platform === 'linux')('signals and kills during a run', () => {
  it.each([
    ['SIGINT', 130],
    ['SIGTERM', 143],
  ] as const)('%s while recordings are being read: exit %i, a message, no reports and no temporary files', async (signal, code) => {
    const out = join(dir, `out-${signal}`);
    await mkdir(out);
    const junit = join(out, 'junit.xml');
    const json = join(out, 'record.json');
    // the big file 40 times over: the run is certainly still reading when the signal comes
    const child = execa('node', [bin, 'screen', ...Array(40).fill(big), '--rules', rules, '--jobs', '1', '--junit', junit, '--json', json], {
      reject: false,
      env: { NO_COLOR: '1' },
    });
    expect(await untilOpen(child, big)).toBe(true);
    child.kill(signal);
    const r = await child;
    expect(r.exitCode).toBe(code);
    expect(r.stderr).toBe(`vibgate: stopped by ${signal} before the run finished; the gate did not pass`); // execa drops the last line break
    expect(readdirSync(out)).toEqual([]);
  });

  it('SIGTERM while the reports are being written: no temporary file is left, and a report at its target is whole', async () => {
    let caught = 0;
    for (let attempt = 0; attempt < 5 && caught === 0; attempt++) {
      const out = join(dir, `out-term-write-${attempt}`);
      await mkdir(out);
      const html = join(out, 'report.html');
      const child = execa('node', [bin, 'screen', big, big, big, '--rules', rules, '--jobs', '1', '--html', html, '--json', join(out, 'r.json')], { reject: false, env: { NO_COLOR: '1' } });
      const watcher = watch(out, (_event, name) => {
        if (name?.endsWith('.tmp')) child.kill('SIGTERM');
      });
      const r = await child;
      watcher.close();
      if (r.exitCode === 143) caught += 1;
      expect(readdirSync(out).filter((f) => f.endsWith('.tmp'))).toEqual([]);
      if (existsSync(html)) expect((await readFile(html, 'utf8')).trimEnd().endsWith('</html>')).toBe(true);
    }
    expect(caught, 'a SIGTERM landed while a report was being written').toBeGreaterThan(0);
  });

  it('SIGKILL while a report is being written never leaves a half-written report at its target', async () => {
    let killed = 0;
    for (let attempt = 0; attempt < 5 && killed === 0; attempt++) {
      const out = join(dir, `out-kill-${attempt}`);
      await mkdir(out);
      const junit = join(out, 'junit.xml');
      await writeFile(junit, '<old/>');
      const html = join(out, 'report.html');
      const child = execa('node', [bin, 'screen', big, big, '--rules', rules, '--jobs', '1', '--html', html, '--junit', junit], { reject: false, env: { NO_COLOR: '1' } });
      const watcher = watch(out, (_event, name) => {
        if (name?.endsWith('.tmp')) child.kill('SIGKILL');
      });
      const r = await child;
      watcher.close();
      if (r.signal === 'SIGKILL') killed += 1;
      // the old report, or a whole new one: never a part of one
      const text = await readFile(junit, 'utf8');
      expect(text === '<old/>' || /^<\?xml[\s\S]*<\/testsuites>\s*$/.test(text), text.slice(-200)).toBe(true);
      if (existsSync(html)) expect((await readFile(html, 'utf8')).trimEnd().endsWith('</html>')).toBe(true);
    }
    expect(killed, 'a SIGKILL landed while a report was being written').toBeGreaterThan(0);
  });
});
