/**
 * Verifying a JSON audit record against the world as it is now: its signature, every
 * recording and rule file it names (re-hashed where they are), and optionally its place in
 * a ledger. Each check is one finding whose message says exactly what differs.
 */
import { readFile, stat } from 'node:fs/promises';
import { isAbsolute, join, normalize, resolve, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import { sha256File } from '../cli/hash.js';
import { BUNDLED_PREFIX } from '../rules/load.js';
import { tool } from '../version.js';
import { AuditError, errorCode, fileProblem, shortHash, type AuditFinding } from './findings.js';
import { ed25519PublicKey, readKeyFile } from './keys.js';
import { verifyLedger } from './ledger.js';
import { parseRecord, verifySignature, type SignatureCheck } from './sign.js';

export interface VerifyOptions {
  /** Public key file (PEM) the record must be signed with; relative to cwd. */
  key?: string;
  /** Ledger file the record must be in; relative to cwd. */
  ledger?: string;
  /** Where the screening ran: the record's relative recording and rule-file paths are taken from here. */
  cwd: string;
  /** Where `recordPath`, `key` and `ledger` are taken from, if not cwd (a command line's working directory). */
  argumentsDir?: string;
  /** vibgate's bundled rule files, for `bundled:NAME` (default: the package's rules/). */
  bundledRoot?: string;
}

export interface RecordVerification {
  findings: AuditFinding[];
  /** No finding failed. */
  ok: boolean;
  signature: SignatureCheck;
}

const defaultBundledRoot = (): string => fileURLToPath(new URL('../../rules/', import.meta.url));

/**
 * Verifies the record at `recordPath`. Throws AuditError (nothing checked) when the record,
 * the key or the ledger cannot be read, or the record is not a vibgate record.
 */
export async function verifyRecord(recordPath: string, options: VerifyOptions): Promise<RecordVerification> {
  const cwd = options.cwd;
  const argumentsDir = options.argumentsDir ?? cwd;
  let text: string;
  try {
    text = await readFile(resolve(argumentsDir, recordPath), 'utf8');
  } catch (err) {
    throw new AuditError(`Cannot read the record "${recordPath}": ${fileProblem(err)}`);
  }
  const record = parseRecord(text, `"${recordPath}"`);
  const { rules, recordings } = recordFiles(record, recordPath);

  const findings: AuditFinding[] = [];
  const trusted = options.key === undefined ? undefined : ed25519PublicKey(await readKeyFile(resolve(argumentsDir, options.key), options.key), `"${options.key}"`);
  const signature = verifySignature(text, trusted);
  findings.push({ check: 'signature', status: signatureStatus(signature, trusted !== undefined), subject: null, message: signature.message });

  const bundledRoot = options.bundledRoot === undefined ? defaultBundledRoot() : resolve(cwd, options.bundledRoot);
  const recordedVersion = typeof (record.tool as { version?: unknown } | undefined)?.version === 'string' ? (record.tool as { version: string }).version : null;
  for (const file of rules) {
    const where = ruleFileLocation(file.path, cwd, bundledRoot);
    if (where === null) {
      findings.push({ check: 'rule-file', status: 'fail', subject: file.path, message: `rule file "${file.path}" does not name a bundled rule file, so it cannot be found` });
      continue;
    }
    if (file.conflict !== undefined) {
      findings.push({
        check: 'rule-file',
        status: 'fail',
        subject: file.path,
        message: `the record gives two hashes for rule file "${file.path}" (rules.sha256 ${shortHash(file.conflict)}, rules.files ${shortHash(file.sha256)}): one was edited`,
      });
    }
    const bundled = file.path.startsWith(BUNDLED_PREFIX);
    const finding = await compareFile('rule-file', file.path, where, file.sha256);
    if (finding.status === 'fail' && bundled && recordedVersion !== null && recordedVersion !== tool.version) {
      finding.message += `; it is one of vibgate's bundled rule files, and the record was made by vibgate ${recordedVersion}, this is ${tool.version}`;
    }
    findings.push(finding);
  }
  for (const r of recordings) {
    if (r.sha256 === null) {
      const why = r.error === null ? '' : `: ${r.error}`;
      findings.push({ check: 'recording', status: 'note', subject: r.path, message: `recording "${r.path}" has no hash in the record (it could not be read when it was screened${why})` });
      continue;
    }
    findings.push(await compareFile('recording', r.path, resolve(cwd, r.path), r.sha256));
  }

  if (options.ledger !== undefined) {
    const ledger = await verifyLedger(resolve(argumentsDir, options.ledger), text, { display: options.ledger });
    findings.push(...ledger.findings);
  }
  return { findings, ok: findings.every((f) => f.status !== 'fail'), signature };
}

/**
 * A missing key is not a failure unless one was asked for: an unsigned record can still be
 * checked against its files. An unpinned valid signature is a note (it proves integrity, not origin).
 */
function signatureStatus(check: SignatureCheck, keyGiven: boolean): AuditFinding['status'] {
  switch (check.status) {
    case 'valid':
      return check.pinned ? 'ok' : 'note';
    case 'unsigned':
      return keyGiven ? 'fail' : 'note';
    default:
      return 'fail';
  }
}

const WORDING = {
  recording: { noun: 'recording', changed: 'changed since it was screened' },
  'rule-file': { noun: 'rule file', changed: 'was edited since the screening' },
} as const;

async function compareFile(check: 'recording' | 'rule-file', display: string, absolute: string, recorded: string): Promise<AuditFinding> {
  const { noun, changed } = WORDING[check];
  const finding = (status: AuditFinding['status'], message: string, now: string | null): AuditFinding => ({
    check,
    status,
    subject: display,
    message,
    sha256: { recorded, now },
  });
  try {
    // Paths come from the record, which may be hostile: hash regular files only (never a
    // FIFO or /dev/zero, which would never end).
    const info = await stat(absolute);
    if (!info.isFile()) return finding('fail', `${noun} "${display}" is not a file now (${absolute})`, null);
    const now = await sha256File(absolute);
    if (now !== recorded) return finding('fail', `${noun} "${display}" ${changed} (sha256 now ${shortHash(now)} was ${shortHash(recorded)})`, now);
    return finding('ok', `${noun} "${display}" is unchanged (sha256 ${shortHash(now)})`, now);
  } catch (err) {
    if (errorCode(err) === 'ENOENT' || errorCode(err) === 'ENOTDIR') return finding('fail', `${noun} "${display}" is missing (no file at ${absolute})`, null);
    return finding('fail', `${noun} "${display}" cannot be read: ${fileProblem(err)}`, null);
  }
}

/** Where a rule file named in a record is now: `bundled:NAME` in the bundled root, else relative to cwd. */
function ruleFileLocation(path: string, cwd: string, bundledRoot: string): string | null {
  if (!path.startsWith(BUNDLED_PREFIX)) return resolve(cwd, path);
  const name = normalize(path.slice(BUNDLED_PREFIX.length));
  if (name === '' || isAbsolute(name) || name.split(/[\\/]/).includes('..')) return null;
  const file = join(bundledRoot, name.endsWith('.yaml') ? name : `${name}.yaml`);
  return file.startsWith(bundledRoot.endsWith(sep) ? bundledRoot : bundledRoot + sep) ? file : null;
}

interface RuleFile {
  path: string;
  sha256: string;
  /** rules.sha256, when it differs from this file's entry in rules.files. */
  conflict?: string;
}

interface NamedFile {
  path: string;
  sha256: string | null;
  error: string | null;
}

/** The rule files and recordings a record names, or an AuditError when it is not a vibgate record. */
function recordFiles(record: Record<string, unknown>, recordPath: string): { rules: RuleFile[]; recordings: NamedFile[] } {
  const notARecord = (what: string) => new AuditError(`"${recordPath}" is not a vibgate record: ${what}`);
  const isHex = (v: unknown): v is string => typeof v === 'string' && /^[0-9a-f]{64}$/.test(v);
  const rules = record.rules as { path?: unknown; sha256?: unknown; files?: unknown } | undefined;
  if (typeof rules !== 'object' || rules === null || typeof rules.path !== 'string' || !isHex(rules.sha256)) throw notARecord('no rules.path and rules.sha256');
  const files: RuleFile[] = [];
  const listed = Array.isArray(rules.files) ? (rules.files as unknown[]) : [];
  for (const f of listed) {
    const file = f as { path?: unknown; sha256?: unknown } | null;
    if (typeof file?.path !== 'string' || !isHex(file.sha256)) throw notARecord('an entry of rules.files has no path or sha256');
    files.push({ path: file.path, sha256: file.sha256 });
  }
  const given = files.find((f) => f.path === rules.path);
  if (given === undefined) files.unshift({ path: rules.path, sha256: rules.sha256 });
  // two hashes for one file: one of them was edited (in an unsigned record, or before signing)
  else if (given.sha256 !== rules.sha256) given.conflict = rules.sha256;
  if (!Array.isArray(record.recordings)) throw notARecord('no recordings list');
  const recordings = (record.recordings as unknown[]).map((x, i): NamedFile => {
    const r = x as { path?: unknown; sha256?: unknown; error?: unknown } | null;
    if (typeof r?.path !== 'string' || !(r.sha256 === null || isHex(r.sha256))) throw notARecord(`recordings[${i}] has no path or sha256`);
    return { path: r.path, sha256: r.sha256, error: typeof r.error === 'string' ? r.error : null };
  });
  return { rules: files, recordings };
}
