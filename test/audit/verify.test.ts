import { beforeAll, describe, expect, it } from 'vitest';
import { createHash, createPublicKey } from 'node:crypto';
import { copyFile, mkdir, readFile, rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildWav, fixtureDir, interleave, writeFixture, FORMAT_FLOAT } from '../helpers/wav-writer.js';
import { gaussian } from '../helpers/random.js';
import { runCli } from '../helpers/cli.js';
import type { CliIo } from '../../src/cli/io.js';
import { runScreen } from '../../src/cli/screen.js';
import { runVerify } from '../../src/cli/verify.js';
import { verifyRecord } from '../../src/audit/verify.js';
import { checkSignAndLedger, signAndLedger } from '../../src/audit/sign-and-ledger.js';
import { existsSync } from 'node:fs';
import { generateKeyPair, signRecord } from '../../src/audit/sign.js';
import { appendLedger } from '../../src/audit/ledger.js';
import { AuditError } from '../../src/audit/findings.js';

const fs = 1024;
const sha256 = (bytes: Buffer | string) => createHash('sha256').update(bytes).digest('hex');
const short = (hex: string) => `${hex.slice(0, 12)}…`;
const fingerprint = (pem: string) => sha256(createPublicKey(pem).export({ type: 'spki', format: 'der' }));
const bundledRules = fileURLToPath(new URL('../../rules/', import.meta.url));

let dir = '';
const keys = generateKeyPair();
let privateKey = '';
let publicKey = '';

function captureIo(cwd: string) {
  const out = { stdout: '', stderr: '' };
  const io: CliIo = {
    stdout: { write: (s: string) => { out.stdout += s; return true; }, isTTY: false },
    stderr: { write: (s: string) => { out.stderr += s; return true; }, isTTY: false },
    env: { NO_COLOR: '1' },
    cwd,
  };
  return { io, out };
}

async function wav(name: string, seeds: number[]): Promise<string> {
  return writeFixture(dir, name, buildWav({
    fmt: { formatTag: FORMAT_FLOAT, channels: seeds.length, sampleRate: fs, bitsPerSample: 32 },
    data: interleave('float32', seeds.map((s) => Array.from(gaussian(20 * fs, s)))),
  }));
}

const RULES = [
  'format: 1',
  'name: lab-random',
  'checks:',
  '  non-finite: on',
  '  dropout: { max-seconds: 0.01 }',
  '  kurtosis: { whole: [2.4, 4], frames: [1.6, 8], severity: warning }',
  '',
].join('\n');

/** A fresh sub-directory with two recordings, a rule file and a signed record of screening them. */
async function screenedCase(name: string, options: { sign?: boolean; ledger?: boolean } = {}) {
  const root = join(dir, name);
  await mkdir(root);
  const a = await writeFixture(root, 'run1.wav', await readFile(await wav(`${name}-1.wav`, [1, 2])));
  const b = await writeFixture(root, 'run2.wav', await readFile(await wav(`${name}-2.wav`, [3, 4])));
  const rules = join(root, 'lab.yaml');
  await writeFile(rules, RULES);
  const json = join(root, 'unsigned.json');
  const r = await runCli(['screen', a, b, '--rules', rules, '--json', json]);
  expect(r.stderr).toBe('');
  const record = join(root, 'record.json');
  const ledger = join(root, 'ledger.jsonl');
  const text = await signAndLedger(await readFile(json, 'utf8'), {
    sign: options.sign === false ? undefined : privateKey,
    ledger: options.ledger ? ledger : undefined,
  });
  await writeFile(record, text);
  return { root, a, b, rules, record, ledger };
}

const failures = (findings: Array<{ status: string; message: string }>) => findings.filter((f) => f.status === 'fail').map((f) => f.message);

beforeAll(async () => {
  dir = await fixtureDir('vibgate-audit-');
  privateKey = join(dir, 'lab.key');
  publicKey = join(dir, 'lab.pub');
  await writeFile(privateKey, keys.privateKeyPem, { mode: 0o600 });
  await writeFile(publicKey, keys.publicKeyPem);
});

describe('verifyRecord() on an untouched record', () => {
  it('finds every file unchanged and the signature valid for the pinned key', async () => {
    const c = await screenedCase('untouched');
    const result = await verifyRecord(c.record, { key: publicKey, cwd: dir });
    expect(result.ok).toBe(true);
    const hashOf = async (p: string) => short(sha256(await readFile(p)));
    expect(result.findings.map((f) => `${f.status} ${f.message}`)).toEqual([
      `ok the signature is valid, made with the trusted key ${fingerprint(keys.publicKeyPem).slice(0, 16)}…`,
      `ok rule file "${c.rules}" is unchanged (sha256 ${await hashOf(c.rules)})`,
      `ok recording "${c.a}" is unchanged (sha256 ${await hashOf(c.a)})`,
      `ok recording "${c.b}" is unchanged (sha256 ${await hashOf(c.b)})`,
    ]);
  });
});

describe('verifyRecord() finds tampering', () => {
  it('a flipped byte in a recording, with both hashes', async () => {
    const c = await screenedCase('flip');
    const before = sha256(await readFile(c.b));
    const bytes = await readFile(c.b);
    bytes[bytes.length - 2] ^= 0x01; // one bit of the last float32 sample
    await writeFile(c.b, bytes);
    const result = await verifyRecord(c.record, { key: publicKey, cwd: dir });
    expect(result.ok).toBe(false);
    expect(failures(result.findings)).toEqual([`recording "${c.b}" changed since it was screened (sha256 now ${short(sha256(bytes))} was ${short(before)})`]);
    expect(result.findings.find((f) => f.subject === c.b)?.sha256).toEqual({ recorded: before, now: sha256(bytes) });
  });

  it('an edited limit in the rule file', async () => {
    const c = await screenedCase('limit');
    const edited = RULES.replace('max-seconds: 0.01', 'max-seconds: 0.5');
    expect(edited).not.toBe(RULES);
    await writeFile(c.rules, edited);
    const result = await verifyRecord(c.record, { key: publicKey, cwd: dir });
    expect(failures(result.findings)).toEqual([`rule file "${c.rules}" was edited since the screening (sha256 now ${short(sha256(edited))} was ${short(sha256(RULES))})`]);
  });

  it('a changed verdict in the signed record', async () => {
    const c = await screenedCase('verdict');
    const text = await readFile(c.record, 'utf8');
    const edited = text.replace(/"verdict": "(pass|warn)"/, '"verdict": "fail"');
    expect(edited).not.toBe(text);
    await writeFile(c.record, edited);
    const result = await verifyRecord(c.record, { key: publicKey, cwd: dir });
    expect(failures(result.findings)).toEqual(['the record was modified after signing (the signature does not match its content)']);
  });

  it('a recording that is gone', async () => {
    const c = await screenedCase('gone');
    await rm(c.a);
    const result = await verifyRecord(c.record, { cwd: dir });
    expect(failures(result.findings)).toEqual([`recording "${c.a}" is missing (no file at ${c.a})`]);
  });

  it('a record signed with another key than the trusted one', async () => {
    const c = await screenedCase('wrong-key');
    const other = generateKeyPair();
    const otherPub = join(c.root, 'other.pub');
    await writeFile(otherPub, other.publicKeyPem);
    const result = await verifyRecord(c.record, { key: otherPub, cwd: dir });
    expect(failures(result.findings)).toEqual([
      `the record was signed with key ${fingerprint(keys.publicKeyPem).slice(0, 16)}…, not with the trusted key ${fingerprint(other.publicKeyPem).slice(0, 16)}…`,
    ]);
  });

  it('a deleted ledger line, by its number', async () => {
    const c = await screenedCase('ledger', { ledger: true });
    // two later runs entered after this one
    await appendLedger(c.ledger, '{"createdAt":"2026-01-01T00:00:00.000Z"}\n');
    await appendLedger(c.ledger, '{"createdAt":"2026-01-02T00:00:00.000Z"}\n');
    expect((await verifyRecord(c.record, { key: publicKey, ledger: c.ledger, cwd: dir })).ok).toBe(true);
    const lines = (await readFile(c.ledger, 'utf8')).split('\n');
    lines.splice(1, 1);
    await writeFile(c.ledger, lines.join('\n'));
    const result = await verifyRecord(c.record, { key: publicKey, ledger: c.ledger, cwd: dir });
    expect(failures(result.findings)).toEqual(['ledger line 2: previous hash does not match line 1 (seq 3 follows seq 1: 1 line deleted before it?)']);
  });

  it('a record whose own ledger line was deleted', async () => {
    const c = await screenedCase('ledger-own', { ledger: true });
    const recordSha = sha256(await readFile(c.record));
    await writeFile(c.ledger, '');
    const result = await verifyRecord(c.record, { key: publicKey, ledger: c.ledger, cwd: dir });
    expect(failures(result.findings)).toEqual([`the record is not in the ledger (no line has its sha256 ${short(recordSha)}): it was never entered, or its line was deleted`]);
  });
});

describe('verifyRecord() on an unsigned record', () => {
  it('reports it as unsigned, a note without a key and a failure with one', async () => {
    const c = await screenedCase('unsigned', { sign: false });
    const loose = await verifyRecord(c.record, { cwd: dir });
    expect(loose.ok).toBe(true);
    expect(loose.findings[0]).toEqual({ check: 'signature', status: 'note', subject: null, message: 'the record is not signed' });
    const pinned = await verifyRecord(c.record, { key: publicKey, cwd: dir });
    expect(pinned.ok).toBe(false);
    expect(failures(pinned.findings)).toEqual(['the record is not signed']);
  });
});

describe('verifyRecord() paths', () => {
  it('takes relative paths from cwd and finds bundled:NAME in the package rules', async () => {
    const root = join(dir, 'relative');
    await mkdir(root);
    await copyFile(await wav('relative-src.wav', [9]), join(root, 'run3.wav'));
    const base = await readFile(join(bundledRules, 'base.yaml'));
    const random = await readFile(join(bundledRules, 'random-vibration.yaml'));
    const lab = 'format: 1\nname: lab\nextends: [bundled:random-vibration]\n';
    await writeFile(join(root, 'lab.yaml'), lab);
    const record = JSON.stringify({
      tool: { name: 'vibgate', version: '0.0.0' },
      createdAt: '2026-01-01T00:00:00.000Z',
      rules: {
        path: 'lab.yaml',
        sha256: sha256(lab),
        name: 'lab',
        files: [
          { path: 'lab.yaml', sha256: sha256(lab) },
          { path: 'bundled:random-vibration', sha256: sha256(random) },
          { path: 'bundled:base.yaml', sha256: sha256(base) },
        ],
      },
      verdict: 'pass',
      recordings: [
        { path: 'run3.wav', sha256: sha256(await readFile(join(root, 'run3.wav'))), error: null },
        { path: 'lost.wav', sha256: null, error: 'Cannot read "lost.wav": no such file' },
      ],
    });
    await writeFile(join(root, 'record.json'), signRecord(record, keys.privateKeyPem));
    const result = await verifyRecord('record.json', { cwd: root });
    expect(result.findings.map((f) => `${f.status} ${f.message}`).slice(1)).toEqual([
      `ok rule file "lab.yaml" is unchanged (sha256 ${short(sha256(lab))})`,
      `ok rule file "bundled:random-vibration" is unchanged (sha256 ${short(sha256(random))})`,
      `ok rule file "bundled:base.yaml" is unchanged (sha256 ${short(sha256(base))})`,
      `ok recording "run3.wav" is unchanged (sha256 ${short(sha256(await readFile(join(root, 'run3.wav'))))})`,
      'note recording "lost.wav" has no hash in the record (it could not be read when it was screened: Cannot read "lost.wav": no such file)',
    ]);
  });

  it('the hashes of bundled rule files match what screening recorded', async () => {
    const root = join(dir, 'bundled');
    await mkdir(root);
    const rec = await wav('bundled.wav', [5]);
    const rules = join(root, 'lab.yaml');
    await writeFile(rules, 'format: 1\nname: lab\nextends: [bundled:random-vibration]\n');
    const json = join(root, 'record.json');
    await runCli(['screen', rec, '--rules', rules, '--json', json]);
    const listed = JSON.parse(await readFile(json, 'utf8')).rules.files.map((f: { path: string }) => f.path);
    expect(listed).toContain('bundled:random-vibration');
    const result = await verifyRecord(json, { cwd: dir });
    expect(failures(result.findings)).toEqual([]);
    expect(result.findings.filter((f) => f.check === 'rule-file')).toHaveLength(listed.length);
  });

  it('says when a changed bundled rule file may come from another vibgate version', async () => {
    const root = join(dir, 'bundled-version');
    await mkdir(root);
    const { version } = JSON.parse(await readFile(new URL('../../package.json', import.meta.url), 'utf8'));
    const base = await readFile(join(bundledRules, 'base.yaml'));
    const old = 'd'.repeat(64);
    const record = { tool: { name: 'vibgate', version: `${version}-older` }, rules: { path: 'bundled:base.yaml', sha256: old, files: [] }, recordings: [] };
    await writeFile(join(root, 'record.json'), JSON.stringify(record));
    const result = await verifyRecord('record.json', { cwd: root });
    expect(failures(result.findings)).toEqual([
      `rule file "bundled:base.yaml" was edited since the screening (sha256 now ${short(sha256(base))} was ${short(old)}); ` +
        `it is one of vibgate's bundled rule files, and the record was made by vibgate ${version}-older, this is ${version}`,
    ]);
  });

  it('notices a record that gives two hashes for the given rule file', async () => {
    const root = join(dir, 'two-hashes');
    await mkdir(root);
    const lab = 'format: 1\nname: lab\n';
    await writeFile(join(root, 'lab.yaml'), lab);
    const other = 'c'.repeat(64);
    const record = { rules: { path: 'lab.yaml', sha256: other, files: [{ path: 'lab.yaml', sha256: sha256(lab) }] }, recordings: [] };
    await writeFile(join(root, 'record.json'), JSON.stringify(record));
    const result = await verifyRecord('record.json', { cwd: root });
    expect(failures(result.findings)).toEqual([
      `the record gives two hashes for rule file "lab.yaml" (rules.sha256 ${short(other)}, rules.files ${short(sha256(lab))}): one was edited`,
    ]);
  });

  it('refuses a hostile bundled: path and does not hash devices', async () => {
    const root = join(dir, 'hostile');
    await mkdir(root);
    const record = JSON.stringify({
      rules: { path: 'bundled:../../etc/passwd', sha256: 'a'.repeat(64), files: [] },
      recordings: [{ path: '/dev/zero', sha256: 'b'.repeat(64), error: null }],
    });
    await writeFile(join(root, 'record.json'), record);
    const result = await verifyRecord('record.json', { cwd: root });
    expect(failures(result.findings)).toEqual([
      'rule file "bundled:../../etc/passwd" does not name a bundled rule file, so it cannot be found',
      'recording "/dev/zero" is not a file now (/dev/zero)',
    ]);
  });

  it.each([
    ['a missing record', 'none.json', null, 'Cannot read the record "none.json": no such file'],
    ['text that is not JSON', 'bad.json', 'not json', /^"bad\.json" is not JSON: /],
    ['JSON that is not a record', 'other.json', '{"a":1}', '"other.json" is not a vibgate record: no rules.path and rules.sha256'],
  ])('throws AuditError for %s', async (_, name, text, message) => {
    const root = join(dir, `bad-${name}`);
    await mkdir(root);
    if (text !== null) await writeFile(join(root, name), text);
    const run = verifyRecord(name, { cwd: root });
    await expect(run).rejects.toThrow(AuditError);
    await expect(verifyRecord(name, { cwd: root })).rejects.toThrow(message);
  });
});

describe('vibgate verify (runVerify)', () => {
  it('prints one line per check and exits 0 when all hold', async () => {
    const c = await screenedCase('cli-ok', { ledger: true });
    const { io, out } = captureIo(dir);
    expect(await runVerify(c.record, io, { key: publicKey, ledger: c.ledger })).toBe(0);
    const lines = out.stdout.trimEnd().split('\n');
    expect(lines).toHaveLength(7);
    expect(lines[0]).toMatch(/^ok {4}the signature is valid, made with the trusted key /);
    expect(lines[5]).toMatch(/^ok {4}the record is ledger line 1 \(seq 1, entered /);
    expect(lines[6]).toBe(`VERIFIED "${c.record}": 6 checks, none differs`);
  });

  it('exits 1 and marks what differs', async () => {
    const c = await screenedCase('cli-fail');
    await writeFile(c.rules, RULES + '# a comment is an edit too\n');
    const { io, out } = captureIo(dir);
    expect(await runVerify(c.record, io, {})).toBe(1);
    expect(out.stdout).toContain(`FAIL  rule file "${c.rules}" was edited since the screening`);
    expect(out.stdout).toMatch(/^note  the signature is valid for the key embedded in the record/m);
    expect(out.stdout.trimEnd().split('\n').at(-1)).toBe(`NOT VERIFIED "${c.record}": 1 of 4 checks differ`);
  });

  it('exits 2 when the record cannot be read, or the key is not a public key', async () => {
    const { io, out } = captureIo(dir);
    expect(await runVerify('missing.json', io, {})).toBe(2);
    expect(out.stderr).toBe('vibgate: Cannot read the record "missing.json": no such file\nvibgate: nothing was verified\n');
    const c = await screenedCase('cli-key');
    const second = captureIo(dir);
    expect(await runVerify(c.record, second.io, { key: privateKey })).toBe(2);
    expect(second.out.stderr).toContain(`"${privateKey}" is a private key; give the public key (.pub)`);
  });

  it('takes the record from the working directory and its files from --dir', async () => {
    const root = join(dir, 'cli-dir');
    await mkdir(join(root, 'archive'), { recursive: true });
    const rec = await readFile(await wav('cli-dir.wav', [21]));
    await writeFile(join(root, 'archive', 'run.wav'), rec);
    const lab = 'format: 1\nname: lab\n';
    await writeFile(join(root, 'archive', 'lab.yaml'), lab);
    const record = { rules: { path: 'lab.yaml', sha256: sha256(lab), files: [] }, recordings: [{ path: 'run.wav', sha256: sha256(rec), error: null }] };
    await writeFile(join(root, 'record.json'), JSON.stringify(record));
    const { io, out } = captureIo(root);
    expect(await runVerify('record.json', io, { dir: 'archive' })).toBe(0);
    expect(out.stdout).toContain(`ok    recording "run.wav" is unchanged (sha256 ${short(sha256(rec))})`);
    const there = captureIo(root);
    expect(await runVerify('record.json', there.io, {})).toBe(1);
    expect(there.out.stdout).toContain(`FAIL  recording "run.wav" is missing (no file at ${join(root, 'run.wav')})`);
  });

  it('writes the findings as JSON with --json', async () => {
    const c = await screenedCase('cli-json');
    const { io, out } = captureIo(dir);
    expect(await runVerify(c.record, io, { json: true, key: publicKey })).toBe(0);
    const parsed = JSON.parse(out.stdout);
    expect(parsed.ok).toBe(true);
    expect(parsed.findings.map((f: { check: string }) => f.check)).toEqual(['signature', 'rule-file', 'recording', 'recording']);
  });
});

describe('reproducibility', () => {
  it('the same recordings and rules give byte-identical records for a fixed time', async () => {
    const root = join(dir, 'repro-lib');
    await mkdir(root);
    const rec = await wav('repro-lib.wav', [11, 12]);
    const rules = join(root, 'lab.yaml');
    await writeFile(rules, RULES);
    const now = () => new Date(Date.UTC(2026, 0, 1));
    const texts: string[] = [];
    for (const name of ['one.json', 'two.json']) {
      const { io } = captureIo(root);
      await runScreen([rec], { rules, json: join(root, name), now }, io);
      texts.push(await readFile(join(root, name), 'utf8'));
    }
    expect(texts[1]).toBe(texts[0]);
    // Ed25519 is deterministic (RFC 8032 §5.1.6): identical records, identical signatures
    expect(signRecord(texts[1], keys.privateKeyPem)).toBe(signRecord(texts[0], keys.privateKeyPem));
  });

  it('two CLI runs differ only in createdAt', async () => {
    const root = join(dir, 'repro-cli');
    await mkdir(root);
    const rec = await wav('repro-cli.wav', [13]);
    const rules = join(root, 'lab.yaml');
    await writeFile(rules, RULES);
    const texts: string[] = [];
    for (const name of ['one.json', 'two.json']) {
      await runCli(['screen', rec, '--rules', rules, '--json', join(root, name)]);
      texts.push((await readFile(join(root, name), 'utf8')).replace(/"createdAt": "[^"]*"/, '"createdAt": ""'));
    }
    expect(texts[0]).toContain('"createdAt": ""');
    expect(texts[1]).toBe(texts[0]);
  });
});

describe('signAndLedger()', () => {
  it('writes the signed record before entering it in the ledger', async () => {
    const root = join(dir, 'sign-and-ledger');
    await mkdir(root);
    const order: string[] = [];
    const ledger = join(root, 'ledger.jsonl');
    const text = await signAndLedger('{\n  "verdict": "pass"\n}\n', {
      sign: 'lab.key',
      ledger,
      cwd: dir,
      write: async (t) => {
        order.push(existsSync(ledger) ? 'write after ledger' : 'write');
        await writeFile(join(root, 'record.json'), t);
      },
      onLedger: (a) => order.push(`ledger line ${a.line}`),
    });
    expect(order).toEqual(['write', 'ledger line 1']);
    expect(JSON.parse(text).signature.publicKeySha256).toBe(fingerprint(keys.publicKeyPem));
    expect(JSON.parse(await readFile(ledger, 'utf8')).recordSha256).toBe(sha256(text));
  });

  it('names a key file that is not a private key, and enters nothing', async () => {
    const root = join(dir, 'sign-bad-key');
    await mkdir(root);
    const ledger = join(root, 'ledger.jsonl');
    await expect(signAndLedger('{}', { sign: 'lab.pub', ledger, cwd: dir })).rejects.toThrow('"lab.pub" is a public key; signing needs the private key (.key)');
    await expect(checkSignAndLedger({ sign: 'lab.pub', cwd: dir })).rejects.toThrow(AuditError);
    expect(existsSync(ledger)).toBe(false);
  });

  it('checkSignAndLedger() accepts a usable key and a ledger not yet made', async () => {
    await expect(checkSignAndLedger({ sign: 'lab.key', ledger: join(dir, 'new-ledger.jsonl'), cwd: dir })).resolves.toBeUndefined();
  });
});
