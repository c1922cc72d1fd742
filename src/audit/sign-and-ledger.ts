import { readFile } from 'node:fs/promises';
import { resolve } from 'node:path';
import { AuditError, errorCode, fileProblem } from './findings.js';
import { appendLedger, type LedgerAppend } from './ledger.js';
import { ed25519PrivateKey, readKeyFile } from './keys.js';
import { signRecord } from './sign.js';

export interface SignAndLedgerOptions {
  /** Private key file (PEM, Ed25519) to sign the record with. */
  sign?: string;
  /** Ledger file to enter the (signed) record in. */
  ledger?: string;
  /** Relative paths are taken from here (default: the process's working directory). */
  cwd?: string;
  /**
   * Writes the record (e.g. writeFileAtomic to --json). Called after signing and before the
   * ledger entry, so the ledger never lists a record that failed to be written.
   */
  write?: (text: string) => Promise<void>;
  /** For tests: the ledger entry's time. */
  now?: () => Date;
  /** Told where the record went in the ledger (for the CI log: the head hash). */
  onLedger?: (appended: LedgerAppend) => void;
}

/**
 * What `vibgate screen --sign KEY --ledger FILE` writes as the JSON record: the record,
 * signed when a key is given, written through `write` when given, then entered in the
 * ledger when one is given (the ledger holds the hash of the returned text, byte for byte,
 * so write exactly that). Throws AuditError when the key or the ledger cannot be used.
 */
export async function signAndLedger(recordJson: string, options: SignAndLedgerOptions): Promise<string> {
  const cwd = options.cwd ?? process.cwd();
  let text = recordJson;
  if (options.sign !== undefined) {
    const pem = await readKeyFile(resolve(cwd, options.sign), options.sign);
    ed25519PrivateKey(pem, `"${options.sign}"`); // so a wrong key file is named in the message
    text = signRecord(recordJson, pem);
  }
  await options.write?.(text);
  if (options.ledger !== undefined) {
    const appended = await appendLedger(resolve(cwd, options.ledger), text, { now: options.now });
    options.onLedger?.(appended);
  }
  return text;
}

/**
 * Checks, before anything is screened, that the signing key is an Ed25519 private key and
 * that the ledger (if it exists) can be appended to, so that a wrong `--sign`/`--ledger`
 * is a usage error (exit 2) rather than a failure after a long run. Throws AuditError.
 */
export async function checkSignAndLedger(options: Pick<SignAndLedgerOptions, 'sign' | 'ledger' | 'cwd'>): Promise<void> {
  const cwd = options.cwd ?? process.cwd();
  if (options.sign !== undefined) ed25519PrivateKey(await readKeyFile(resolve(cwd, options.sign), options.sign), `"${options.sign}"`);
  if (options.ledger !== undefined) {
    let text: string;
    try {
      text = await readFile(resolve(cwd, options.ledger), 'utf8');
    } catch (err) {
      if (errorCode(err) === 'ENOENT') return; // the first entry creates it
      throw new AuditError(`Cannot read the ledger "${options.ledger}": ${fileProblem(err)}`);
    }
    if (text !== '' && !text.endsWith('\n')) throw new AuditError(`Cannot append to the ledger "${options.ledger}": its last line is cut off (no newline at the end)`);
  }
}
