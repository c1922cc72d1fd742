import { beforeAll, describe, expect, it } from 'vitest';
import { existsSync } from 'node:fs';
import { readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { Ajv2020 } from 'ajv/dist/2020.js';
import { buildWav, fixtureDir, interleave, writeFixture, FORMAT_FLOAT } from '../helpers/wav-writer.js';
import { gaussian } from '../helpers/random.js';
import type { CliIo } from '../../src/cli/io.js';
import { downstreamArgs, runGated, splitRunArgv } from '../../src/cli/run.js';

const fs = 1024;
let dir = '';
let rules = '';
let clean = '';
let spiky = '';
let faulty = '';
let missing = '';
let script = '';

function captureIo(env: Record<string, string> = {}): CliIo & { out: () => string; err: () => string } {
  let stdout = '';
  let stderr = '';
  return {
    stdout: { write: (s: string) => { stdout += s; return true; }, isTTY: false },
    stderr: { write: (s: string) => { stderr += s; return true; }, isTTY: false },
    env: { NO_COLOR: '1', ...env },
    cwd: process.cwd(),
    out: () => stdout,
    err: () => stderr,
  };
}

async function wav(name: string, channels: Float64Array[]): Promise<string> {
  return writeFixture(dir, name, buildWav({
    fmt: { formatTag: FORMAT_FLOAT, channels: channels.length, sampleRate: fs, bitsPerSample: 32 },
    data: interleave('float32', channels.map((c) => Array.from(c))),
  }));
}

beforeAll(async () => {
  dir = await fixtureDir('vibgate-scale-run-');
  rules = join(dir, 'lab.yaml');
  await writeFile(rules, [
    'format: 1',
    'name: lab-random',
    'checks:',
    '  non-finite: on',
    '  dropout: { max-seconds: 0.01 }',
    '  kurtosis: { whole: [2.4, 4], frames: [1.6, 8], severity: warning }',
    '',
  ].join('\n'));
  clean = await wav('clean.wav', [gaussian(30 * fs, 1), gaussian(30 * fs, 2)]);
  const s = gaussian(30 * fs, 5);
  s[20 * fs] = 12; // one 12 σ spike: frame kurtosis ≈ 18, above 8: a warning, still handed on
  spiky = await wav('spiky.wav', [s, gaussian(30 * fs, 6)]);
  const dropped = gaussian(30 * fs, 3);
  dropped.fill(0, 10 * fs, 11 * fs);
  faulty = await wav('faulty.wav', [gaussian(30 * fs, 4), dropped]);
  missing = join(dir, 'gone.wav');
  // the downstream step: records the arguments it was given, then exits as told
  script = join(dir, 'downstream.mjs');
  await writeFile(script, [
    "import { writeFileSync } from 'node:fs';",
    'const args = process.argv.slice(2);',
    'writeFileSync(process.env.RECEIVED, JSON.stringify(args));',
    "console.log(`downstream got ${args.length} arguments`);",
    "if (process.env.SIGNAL) process.kill(process.pid, process.env.SIGNAL);",
    "else process.exit(Number(process.env.EXIT ?? '0'));",
    '',
  ].join('\n'));
});

async function received(file: string): Promise<string[]> {
  return JSON.parse(await readFile(file, 'utf8')) as string[];
}

describe('vibgate run', () => {
  it('hands the recordings that passed to the command, holds back the others, and records both', async () => {
    const got = join(dir, 'got-1.json');
    const json = join(dir, 'run-1.json');
    const io = captureIo({ RECEIVED: got, EXIT: '0' });
    const code = await runGated([faulty, clean, missing, spiky], io, { rules, json, jobs: 1, command: [process.execPath, script, '--level', '3'] });
    expect(code).toBe(0);
    expect(await received(got)).toEqual(['--level', '3', clean, spiky]);
    expect(io.out()).toContain('downstream got 4 arguments\n');
    expect(io.err()).toContain(`vibgate: handing 2 of 4 recordings to "${process.execPath}"; held back: ${faulty} (fail), ${missing} (error)\n`);
    const record = JSON.parse(await readFile(json, 'utf8'));
    expect(record.handedOn).toEqual([clean, spiky]);
    expect(record.heldBack).toEqual([faulty, missing]);
    expect(record.recordings.map((r: { verdict: string }) => r.verdict)).toEqual(['fail', 'pass', 'error', 'warn']);
  });

  it('writes a record that validates against the record schema with the two fields added', async () => {
    const json = join(dir, 'run-schema.json');
    await runGated([clean, faulty], captureIo({ RECEIVED: join(dir, 'got-schema.json') }), { rules, json, jobs: 1, command: [process.execPath, script] });
    const schema = JSON.parse(await readFile(new URL('../../schemas/record.schema.json', import.meta.url), 'utf8'));
    const record = JSON.parse(await readFile(json, 'utf8'));
    const ajv = new Ajv2020({ allErrors: true, strict: false });
    // as record.schema.json stands, the two fields are refused (additionalProperties: false)
    expect(ajv.validate(schema, record)).toBe(schema.properties.handedOn !== undefined);
    // the proposed addition (see docs/scale-out.md)
    const paths = { type: 'array', items: { type: 'string' } };
    schema.properties.handedOn = { description: 'vibgate run: recordings handed on to the command (paths as given).', ...paths };
    schema.properties.heldBack = { description: 'vibgate run: recordings held back from the command.', ...paths };
    const amended = new Ajv2020({ allErrors: true, strict: false }); // ajv caches a schema by its $id
    expect(amended.validate(schema, record), JSON.stringify(amended.errors)).toBe(true);
  });

  it('passes the command\'s exit code through', async () => {
    for (const exit of ['3', '1', '0']) {
      const got = join(dir, `got-exit-${exit}.json`);
      const code = await runGated([clean], captureIo({ RECEIVED: got, EXIT: exit }), { rules, jobs: 1, command: [process.execPath, script] });
      expect(code).toBe(Number(exit));
      expect(await received(got)).toEqual([clean]);
    }
  });

  it('gives 128 + the signal number when a signal ends the command', async () => {
    const io = captureIo({ RECEIVED: join(dir, 'got-signal.json'), SIGNAL: 'SIGTERM' });
    const code = await runGated([clean], io, { rules, jobs: 1, command: [process.execPath, script] });
    expect(code).toBe(128 + 15);
    expect(io.err()).toContain(`vibgate: "${process.execPath}" was ended by SIGTERM\n`);
  });

  it('puts the paths in place of a {} argument', async () => {
    const got = join(dir, 'got-braces.json');
    const code = await runGated([spiky, faulty, clean], captureIo({ RECEIVED: got }), {
      rules, jobs: 1, command: [process.execPath, script, '--inputs', '{}', '--then', 'done'],
    });
    expect(code).toBe(0);
    expect(await received(got)).toEqual(['--inputs', spiky, clean, '--then', 'done']);
  });

  it('does not run the command and exits 1 when no recording passed', async () => {
    const got = join(dir, 'got-none.json');
    const json = join(dir, 'run-none.json');
    const io = captureIo({ RECEIVED: got });
    const code = await runGated([faulty, missing], io, { rules, json, jobs: 1, command: [process.execPath, script] });
    expect(code).toBe(1);
    expect(existsSync(got)).toBe(false);
    expect(io.err()).toContain(`vibgate: no recording passed the gate; "${process.execPath}" was not run\n`);
    const record = JSON.parse(await readFile(json, 'utf8'));
    expect(record.handedOn).toEqual([]);
    expect(record.heldBack).toEqual([faulty, missing]);
  });

  it('exits 2 without screening on a rule-file error or a missing command', async () => {
    const got = join(dir, 'got-usage.json');
    const bad = join(dir, 'bad.yaml');
    await writeFile(bad, 'format: 1\nname: x\nchecks:\n  kurtosiss: on\n');
    const io = captureIo({ RECEIVED: got });
    expect(await runGated([clean], io, { rules: bad, jobs: 1, command: [process.execPath, script] })).toBe(2);
    expect(io.err()).toContain('vibgate: nothing was screened\n');
    const none = captureIo();
    expect(await runGated([clean], none, { rules, jobs: 1, command: [] })).toBe(2);
    expect(none.err()).toBe('vibgate: run needs the command to run after "--", for example: vibgate run --rules lab.yaml data/*.wav -- python spectra.py\n');
    expect(existsSync(got)).toBe(false);
  });

  it('exits 127 when the command cannot be started', async () => {
    const io = captureIo();
    const nowhere = join(dir, 'no-such-program');
    expect(await runGated([clean], io, { rules, jobs: 1, command: [nowhere] })).toBe(127);
    expect(io.err()).toContain(`vibgate: Cannot run "${nowhere}": no such command\n`);
  });
});

describe('the run command line', () => {
  it('splits at the first -- so the command keeps its own options', () => {
    expect(splitRunArgv(['run', '--rules', 'r.yaml', 'a.wav', '--', 'python', 'x.py', '--', '-v'])).toEqual({
      ours: ['run', '--rules', 'r.yaml', 'a.wav'],
      command: ['python', 'x.py', '--', '-v'],
    });
    expect(splitRunArgv(['run', 'a.wav'])).toEqual({ ours: ['run', 'a.wav'], command: [] });
  });

  it('appends the paths, or puts them where {} stands', () => {
    expect(downstreamArgs(['-o', 'out'], ['a.wav', 'b.wav'])).toEqual(['-o', 'out', 'a.wav', 'b.wav']);
    expect(downstreamArgs(['{}', '-o', 'out'], ['a.wav', 'b.wav'])).toEqual(['a.wav', 'b.wav', '-o', 'out']);
    expect(downstreamArgs(['x{}'], ['a.wav'])).toEqual(['x{}', 'a.wav']);
  });
});
