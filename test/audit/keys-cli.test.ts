import { beforeEach, describe, expect, it } from 'vitest';
import { createHash, createPrivateKey, createPublicKey, sign, verify } from 'node:crypto';
import { mkdtemp, readFile, stat, writeFile } from 'node:fs/promises';
import { existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { CliIo } from '../../src/cli/io.js';
import { runKeysNew } from '../../src/cli/keys.js';

let dir = '';
function captureIo() {
  const out = { stdout: '', stderr: '' };
  const io: CliIo = {
    stdout: { write: (s: string) => { out.stdout += s; return true; } },
    stderr: { write: (s: string) => { out.stderr += s; return true; } },
    env: {},
    cwd: dir,
  };
  return { io, out };
}

beforeEach(async () => {
  dir = await mkdtemp(join(tmpdir(), 'vibgate-keys-'));
});

describe('vibgate keys new (runKeysNew)', () => {
  it('writes a matching Ed25519 pair, the private key readable by its owner only', async () => {
    const { io, out } = captureIo();
    expect(await runKeysNew(io, { out: 'lab' })).toBe(0);
    const privatePem = await readFile(join(dir, 'lab.key'), 'utf8');
    const publicPem = await readFile(join(dir, 'lab.pub'), 'utf8');
    expect(createPrivateKey(privatePem).asymmetricKeyType).toBe('ed25519');
    expect(createPublicKey(publicPem).asymmetricKeyType).toBe('ed25519');
    const message = Buffer.from('run3.wav');
    expect(verify(null, message, createPublicKey(publicPem), sign(null, message, createPrivateKey(privatePem)))).toBe(true);
    if (process.platform !== 'win32') expect((await stat(join(dir, 'lab.key'))).mode & 0o777).toBe(0o600);
    const fingerprint = createHash('sha256').update(createPublicKey(publicPem).export({ type: 'spki', format: 'der' })).digest('hex');
    expect(out.stdout).toBe(
      'wrote the private key "lab.key" (keep it secret: only the signing machine needs it)\n' +
        `wrote the public key "lab.pub" (sha256 ${fingerprint}): give it to whoever verifies records\n`,
    );
  });

  it('refuses to overwrite an existing key and leaves it as it was', async () => {
    await runKeysNew(captureIo().io, { out: 'lab' });
    const before = await readFile(join(dir, 'lab.key'), 'utf8');
    const { io, out } = captureIo();
    expect(await runKeysNew(io, { out: 'lab' })).toBe(2);
    expect(out.stderr).toBe('vibgate: Cannot write "lab.key": it exists, and keys are never overwritten\n');
    expect(await readFile(join(dir, 'lab.key'), 'utf8')).toBe(before);
  });

  it('writes nothing when only the public key exists', async () => {
    await writeFile(join(dir, 'lab.pub'), 'old public key\n');
    const { io, out } = captureIo();
    expect(await runKeysNew(io, { out: 'lab' })).toBe(2);
    expect(out.stderr).toBe('vibgate: Cannot write "lab.pub": it exists, and keys are never overwritten\n');
    expect(existsSync(join(dir, 'lab.key'))).toBe(false);
    expect(await readFile(join(dir, 'lab.pub'), 'utf8')).toBe('old public key\n');
  });
});
