/**
 * Writing the reports when the disk says no: a full disk (ENOSPC while the temporary file
 * is written, and /dev/full itself), a rename that fails, a directory that does not exist,
 * a target that is a directory. Each gives a clear error and exit 1, leaves no temporary
 * file and no half-written report, keeps what was at the target, and still writes the
 * other reports. The failures are injected around node:fs/promises for the temporary
 * files only, so the recordings are read as usual.
 */
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { lstatSync, existsSync, statSync } from 'node:fs';
import { mkdir, readFile, readdir, rm, symlink, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { buildWav, fixtureDir, interleave, writeFixture, FORMAT_FLOAT } from '../helpers/wav-writer.js';
import { gaussian } from '../helpers/random.js';
import { runCli } from '../helpers/cli.js';

const faults = vi.hoisted(() => ({ writeTmp: undefined as string | undefined, renameTmp: undefined as string | undefined }));
vi.mock('node:fs/promises', async (importOriginal) => {
  const real = await importOriginal<typeof import('node:fs/promises')>();
  const fail = (code: string) => Object.assign(new Error(`${code}: injected by the test`), { code });
  const open = async (...args: Parameters<typeof real.open>) => {
    const handle = await real.open(...args);
    if (faults.writeTmp !== undefined && String(args[0]).endsWith('.tmp')) {
      const code = faults.writeTmp;
      // half the text reaches the disk, then the disk is full
      handle.writeFile = async (data: unknown) => {
        await real.writeFile(String(args[0]), String(data).slice(0, 100));
        throw fail(code);
      };
    }
    return handle;
  };
  const rename = async (from: Parameters<typeof real.rename>[0], to: Parameters<typeof real.rename>[1]) => {
    if (faults.renameTmp !== undefined && String(from).endsWith('.tmp')) throw fail(faults.renameTmp);
    return real.rename(from, to);
  };
  return { ...real, default: { ...real, open, rename }, open, rename };
});

let dir = '';
let clean = '';
let rules = '';
beforeAll(async () => {
  dir = await fixtureDir('vibgate-outputs-');
  clean = await writeFixture(dir, 'clean.wav', buildWav({
    fmt: { formatTag: FORMAT_FLOAT, channels: 1, sampleRate: 1024, bitsPerSample: 32 },
    data: interleave('float32', [Array.from(gaussian(30 * 1024, 1))]),
  }));
  rules = join(dir, 'lab.yaml');
  await writeFile(rules, 'format: 1\nname: lab\nchecks:\n  non-finite: on\n');
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

/** A fresh output directory with an old report at `junit.xml`, as a previous run left it. */
async function outDir(name: string): Promise<{ out: string; junit: string; json: string }> {
  const out = join(dir, name);
  await mkdir(out);
  const junit = join(out, 'junit.xml');
  await writeFile(junit, '<old/>');
  return { out, junit, json: join(out, 'record.json') };
}

const leftovers = async (out: string) => (await readdir(out)).filter((f) => f.endsWith('.tmp'));

describe('a full disk or a failing file system while the reports are written', () => {
  it('ENOSPC while writing: exit 1, a plain message for each report, the old report kept, no temporary file', async () => {
    const { out, junit, json } = await outDir('enospc');
    faults.writeTmp = 'ENOSPC';
    try {
      const r = await runCli(['screen', clean, '--rules', rules, '--junit', junit, '--json', json]);
      expect(r.code).toBe(1);
      expect(r.stderr).toBe(
        `vibgate: Cannot write "${junit}": no space left on the device (ENOSPC)\n` +
          `vibgate: Cannot write "${json}": no space left on the device (ENOSPC)\n`,
      );
      expect(await readFile(junit, 'utf8')).toBe('<old/>');
      expect(existsSync(json)).toBe(false);
      expect(await leftovers(out)).toEqual([]);
    } finally {
      faults.writeTmp = undefined;
    }
    // with space again, both are written whole
    const r = await runCli(['screen', clean, '--rules', rules, '--junit', junit, '--json', json]);
    expect(r.code).toBe(0);
    expect(await readFile(junit, 'utf8')).toMatch(/<\/testsuites>\s*$/);
    expect(JSON.parse(await readFile(json, 'utf8')).verdict).toBe('pass');
  });

  it('a rename that fails (as if the run were killed before it): the target is untouched and no temporary file is left', async () => {
    const { out, junit, json } = await outDir('rename');
    faults.renameTmp = 'EIO';
    try {
      const r = await runCli(['screen', clean, '--rules', rules, '--junit', junit, '--json', json]);
      expect(r.code).toBe(1);
      expect(r.stderr).toContain(`vibgate: Cannot write "${junit}": EIO: injected by the test`);
      expect(r.stderr).toContain(`vibgate: Cannot write "${json}": EIO: injected by the test`);
      expect(await readFile(junit, 'utf8')).toBe('<old/>');
      expect(existsSync(json)).toBe(false);
      expect(await leftovers(out)).toEqual([]);
    } finally {
      faults.renameTmp = undefined;
    }
  });

  it.runIf(existsSync('/dev/full'))('--junit /dev/full: exit 1 with "no space left", /dev/full stays a device, --json is still written', async () => {
    const { json } = await outDir('devfull');
    const r = await runCli(['screen', clean, '--rules', rules, '--junit', '/dev/full', '--json', json]);
    expect(r.code).toBe(1);
    expect(r.stderr).toBe('vibgate: Cannot write "/dev/full": no space left on the device (ENOSPC)\n');
    expect(statSync('/dev/full').isCharacterDevice()).toBe(true);
    expect(JSON.parse(await readFile(json, 'utf8')).verdict).toBe('pass');
    expect((await readdir('/dev')).filter((f) => f.startsWith('.full.'))).toEqual([]);
  });

  it('an output directory that does not exist: exit 1, naming it, nothing created', async () => {
    const missing = join(dir, 'no-such-dir', 'junit.xml');
    const r = await runCli(['screen', clean, '--rules', rules, '--junit', missing]);
    expect(r.code).toBe(1);
    expect(r.stderr).toBe(`vibgate: Cannot write "${missing}": the directory "${join(dir, 'no-such-dir')}" does not exist\n`);
    expect(existsSync(join(dir, 'no-such-dir'))).toBe(false);
  });

  it('an output path that is a directory: exit 1, "is a directory", the directory untouched', async () => {
    const { out } = await outDir('is-dir');
    const r = await runCli(['screen', clean, '--rules', rules, '--json', out]);
    expect(r.code).toBe(1);
    expect(r.stderr).toBe(`vibgate: Cannot write "${out}": is a directory\n`);
    expect((await readdir(out)).sort()).toEqual(['junit.xml']);
  });

  it('an output path that is a symbolic link: the file it points at is replaced whole, the link is kept', async () => {
    const { out, junit } = await outDir('link');
    const link = join(out, 'latest.xml');
    await symlink(junit, link);
    const r = await runCli(['screen', clean, '--rules', rules, '--junit', link]);
    expect(r.code).toBe(0);
    expect(lstatSync(link).isSymbolicLink()).toBe(true);
    expect(await readFile(junit, 'utf8')).toMatch(/^<\?xml[\s\S]*<\/testsuites>\s*$/);
    expect(await leftovers(out)).toEqual([]);
  });
});
