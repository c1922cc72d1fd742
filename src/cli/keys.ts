import { chmod, open, unlink } from 'node:fs/promises';
import { resolve } from 'node:path';
import { fileProblem } from '../audit/findings.js';
import { publicKeySha256 } from '../audit/keys.js';
import { generateKeyPair } from '../audit/sign.js';
import { ExitCode, type CliIo } from './io.js';

export interface KeysNewOptions {
  /** Path without extension: writes `<out>.key` (private) and `<out>.pub` (public). */
  out: string;
}

/**
 * `vibgate keys new --out NAME`: a new Ed25519 key pair for signing records. The private
 * key is created with mode 0600 (owner only); neither file is ever overwritten, since
 * replacing a key would orphan every record signed with it. Exit 0 written, 2 otherwise.
 */
export async function runKeysNew(io: CliIo, options: KeysNewOptions): Promise<number> {
  const privatePath = `${options.out}.key`;
  const publicPath = `${options.out}.pub`;
  const pair = generateKeyPair();
  const written: string[] = [];
  try {
    for (const [display, text, mode] of [
      [privatePath, pair.privateKeyPem, 0o600],
      [publicPath, pair.publicKeyPem, 0o644],
    ] as const) {
      const absolute = resolve(io.cwd, display);
      let handle;
      try {
        // 'wx': fails if the file exists, atomically (no check-then-write race)
        handle = await open(absolute, 'wx', mode);
      } catch (err) {
        const why = (err as NodeJS.ErrnoException).code === 'EEXIST' ? 'it exists, and keys are never overwritten' : fileProblem(err);
        io.stderr.write(`vibgate: Cannot write "${display}": ${why}\n`);
        return ExitCode.usage;
      }
      written.push(absolute);
      try {
        await handle.writeFile(text, 'utf8');
        await handle.sync();
      } finally {
        await handle.close();
      }
      // the umask can only take bits away; this makes sure no other bits were there
      if (mode === 0o600) await chmod(absolute, 0o600);
    }
  } catch (err) {
    io.stderr.write(`vibgate: Cannot write the key pair "${options.out}": ${fileProblem(err)}\n`);
    return ExitCode.usage;
  } finally {
    if (written.length < 2) for (const file of written) await unlink(file).catch(() => {});
  }
  io.stdout.write(
    `wrote the private key "${privatePath}" (keep it secret: only the signing machine needs it)\n` +
      `wrote the public key "${publicPath}" (sha256 ${publicKeySha256(pair.publicKeyPem)}): give it to whoever verifies records\n`,
  );
  return ExitCode.ok;
}
