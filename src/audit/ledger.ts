/**
 * The ledger: an append-only JSON Lines file, one line per record entered, each line
 * holding the SHA-256 of the line before it. Editing, deleting, inserting or reordering a
 * line breaks the chain at that place, and verifyLedger says where. Cutting lines off the
 * end leaves a shorter chain that is still whole: to notice that, keep the head hash
 * (printed when a record is entered) somewhere else, such as the CI log.
 *
 * Each line is the canonical JSON (canonical.ts) of one entry:
 *
 *     { "previousSha256": hex | null (first line), "recordCreatedAt": …, "recordSha256": hex,
 *       "rulesSha256": hex | null, "seq": 1, 2, …, "signedBy": key fingerprint | null,
 *       "time": ISO 8601, "verdict": … }
 *
 * `previousSha256` is the SHA-256 of the previous line's canonical JSON (so re-spacing a
 * line is not an edit; changing a value is). `recordSha256` is the SHA-256 of the record
 * file's bytes as written, what `sha256sum record.json` prints.
 */
import { createHash } from 'node:crypto';
import { open, readFile, unlink } from 'node:fs/promises';
import { setTimeout as sleep } from 'node:timers/promises';
import { canonicalJson } from './canonical.js';
import { AuditError, errorCode, fileProblem, shortHash, type AuditFinding } from './findings.js';

export interface LedgerEntry {
  seq: number;
  /** When the entry was made. */
  time: string;
  recordSha256: string;
  previousSha256: string | null;
  /** The record's own createdAt, so an entry can be matched to a record that was changed. */
  recordCreatedAt: string | null;
  verdict: string | null;
  rulesSha256: string | null;
  /** publicKeySha256 of the record's signature, null for an unsigned record. */
  signedBy: string | null;
}

export interface LedgerAppend {
  entry: LedgerEntry;
  /** 1-based line number of the new entry. */
  line: number;
  /** SHA-256 of the new line's canonical JSON: the ledger's head. */
  headSha256: string;
}

const sha256 = (text: string) => createHash('sha256').update(text, 'utf8').digest('hex');
const entryHash = (entry: unknown) => sha256(canonicalJson(entry));

/** How long appendLedger waits for another run's lock before giving up. */
const LOCK_WAIT_MS = 10_000;

/**
 * Adds one entry for `recordText` to the ledger (created when missing). Runs appending to
 * the same ledger at once take turns through `<ledger>.lock`. Refuses (AuditError) to
 * append after a last line that is cut off or not an entry, since the new line could not
 * name its predecessor's hash; it does not re-check the whole chain (verifyLedger does).
 */
export async function appendLedger(ledgerPath: string, recordText: string, options: { now?: () => Date } = {}): Promise<LedgerAppend> {
  const record = parseJsonObject(recordText);
  const lock = await takeLock(ledgerPath);
  try {
    let text = '';
    try {
      text = await readFile(ledgerPath, 'utf8');
    } catch (err) {
      if (errorCode(err) !== 'ENOENT') throw new AuditError(`Cannot read the ledger "${ledgerPath}": ${fileProblem(err)}`);
    }
    if (text !== '' && !text.endsWith('\n')) throw new AuditError(`Cannot append to the ledger "${ledgerPath}": its last line is cut off (no newline at the end)`);
    const lines = text === '' ? [] : text.slice(0, -1).split('\n');
    let previous: { seq: number; hash: string } | null = null;
    if (lines.length > 0) {
      const last = asEntry(lines[lines.length - 1]);
      if (last === null) throw new AuditError(`Cannot append to the ledger "${ledgerPath}": its last line (${lines.length}) is not a ledger entry`);
      previous = { seq: last.seq, hash: entryHash(last.raw) };
    }
    const signature = record?.signature as { publicKeySha256?: unknown } | undefined;
    const rules = record?.rules as { sha256?: unknown } | undefined;
    const entry: LedgerEntry = {
      seq: previous === null ? 1 : previous.seq + 1,
      time: (options.now?.() ?? new Date()).toISOString(),
      recordSha256: sha256(recordText),
      previousSha256: previous === null ? null : previous.hash,
      recordCreatedAt: stringOrNull(record?.createdAt),
      verdict: stringOrNull(record?.verdict),
      rulesSha256: stringOrNull(rules?.sha256),
      signedBy: stringOrNull(signature?.publicKeySha256),
    };
    const line = canonicalJson(entry);
    const handle = await open(ledgerPath, 'a').catch((err: unknown) => {
      throw new AuditError(`Cannot append to the ledger "${ledgerPath}": ${fileProblem(err)}`);
    });
    try {
      // one write of the whole line, flushed: a crash leaves the old ledger or the new one
      await handle.write(line + '\n');
      await handle.sync();
    } finally {
      await handle.close();
    }
    return { entry, line: lines.length + 1, headSha256: sha256(line) };
  } finally {
    await unlink(lock).catch(() => {});
  }
}

export interface LedgerVerification {
  findings: AuditFinding[];
  /** Lines in the ledger (a blank line counts). */
  lines: number;
  /** SHA-256 of the last line's canonical JSON, null for an empty ledger or an unreadable last line. */
  headSha256: string | null;
  /** The line holding the given record, null when it is not there (or none was given). */
  recordLine: number | null;
}

/**
 * Checks the ledger's chain end to end, and with `recordText`, whether that record (byte
 * for byte) was entered. Every break is a `fail` finding naming the line; a whole chain is
 * one `ok` finding. Throws AuditError when the ledger cannot be read at all (naming it as
 * `options.display`, default the path).
 */
export async function verifyLedger(ledgerPath: string, recordText?: string, options: { display?: string } = {}): Promise<LedgerVerification> {
  const display = options.display ?? ledgerPath;
  let text: string;
  try {
    text = await readFile(ledgerPath, 'utf8');
  } catch (err) {
    throw new AuditError(`Cannot read the ledger "${display}": ${fileProblem(err)}`);
  }
  const findings: AuditFinding[] = [];
  const fail = (message: string) => findings.push({ check: 'ledger', status: 'fail', subject: null, message });
  const lines = text === '' ? [] : (text.endsWith('\n') ? text.slice(0, -1) : text).split('\n');
  const entries = lines.map(asEntry);
  const hashes = entries.map((e) => (e === null ? null : entryHash(e.raw)));
  if (text !== '' && !text.endsWith('\n')) fail(`ledger line ${lines.length} has no newline at its end (cut off?)`);

  for (const [i, entry] of entries.entries()) {
    const n = i + 1;
    if (entry === null) {
      fail(lines[i].trim() === '' ? `ledger line ${n} is empty (edited?)` : `ledger line ${n} is not a ledger entry (edited or cut off?)`);
      continue;
    }
    if (i === 0) {
      if (entry.previousSha256 !== null || entry.seq !== 1) {
        fail(`ledger line 1 (seq ${entry.seq}) has a previous hash or a seq other than 1: the lines before it were deleted?`);
      }
      continue;
    }
    const before = entries[i - 1];
    if (before === null) continue; // already reported; its hash cannot be recomputed
    if (entry.previousSha256 !== hashes[i - 1]) {
      fail(`ledger line ${n}: previous hash does not match line ${n - 1} (${breakCause(n, entry, before, hashes)})`);
    } else if (entry.seq !== before.seq + 1) {
      fail(`ledger line ${n}: seq ${entry.seq} does not follow seq ${before.seq}`);
    }
  }
  const headSha256 = hashes.length > 0 ? hashes[hashes.length - 1] : null;
  if (findings.length === 0) {
    findings.push({
      check: 'ledger',
      status: 'ok',
      subject: null,
      message:
        lines.length === 0
          ? 'the ledger is empty'
          : `the ledger's ${lines.length} line${lines.length === 1 ? '' : 's'} chain unbroken (head sha256 ${shortHash(headSha256!)})`,
    });
  }

  let recordLine: number | null = null;
  if (recordText !== undefined) {
    const recordSha256 = sha256(recordText);
    const at = entries.findIndex((e) => e?.recordSha256 === recordSha256);
    if (at >= 0) {
      recordLine = at + 1;
      findings.push({ check: 'ledger', status: 'ok', subject: null, message: `the record is ledger line ${recordLine} (seq ${entries[at]!.seq}, entered ${entries[at]!.time})` });
    } else {
      const createdAt = stringOrNull(parseJsonObject(recordText)?.createdAt);
      const same = createdAt === null ? -1 : entries.findIndex((e) => e?.recordCreatedAt === createdAt);
      fail(
        same >= 0
          ? `the record is not in the ledger as it is now: line ${same + 1} was entered for the record made at ${createdAt}, ` +
              `with sha256 ${shortHash(entries[same]!.recordSha256)}, and the record's sha256 is now ${shortHash(recordSha256)}: the record was changed after it was entered`
          : `the record is not in the ledger (no line has its sha256 ${shortHash(recordSha256)}): it was never entered, or its line was deleted`,
      );
    }
  }
  return { findings, lines: lines.length, headSha256, recordLine };
}

type ParsedEntry = LedgerEntry & { raw: Record<string, unknown> };

/** Line `n` does not chain to line n − 1: the likeliest reason, from seq and the other hashes. */
function breakCause(n: number, entry: ParsedEntry, before: ParsedEntry, hashes: Array<string | null>): string {
  const follows = hashes.indexOf(entry.previousSha256);
  if (follows >= 0 && follows + 1 !== n - 1) return `it follows line ${follows + 1}: lines reordered?`;
  if (entry.seq > before.seq + 1) {
    const gone = entry.seq - before.seq - 1;
    return `seq ${entry.seq} follows seq ${before.seq}: ${gone} line${gone === 1 ? '' : 's'} deleted before it?`;
  }
  if (entry.seq <= before.seq) return `seq ${entry.seq} comes after seq ${before.seq}: lines reordered or copied?`;
  return `line ${n - 1} edited?`;
}

/** One ledger line as an entry, or null when it is not JSON or lacks an entry's fields. */
function asEntry(line: string): ParsedEntry | null {
  const raw = parseJsonObject(line);
  if (raw === null) return null;
  const hex = (v: unknown) => typeof v === 'string' && /^[0-9a-f]{64}$/.test(v);
  if (!Number.isSafeInteger(raw.seq) || typeof raw.time !== 'string' || !hex(raw.recordSha256)) return null;
  if (raw.previousSha256 !== null && !hex(raw.previousSha256)) return null;
  return {
    seq: raw.seq as number,
    time: raw.time,
    recordSha256: raw.recordSha256 as string,
    previousSha256: raw.previousSha256 as string | null,
    recordCreatedAt: stringOrNull(raw.recordCreatedAt),
    verdict: stringOrNull(raw.verdict),
    rulesSha256: stringOrNull(raw.rulesSha256),
    signedBy: stringOrNull(raw.signedBy),
    raw,
  };
}

function parseJsonObject(text: string): Record<string, unknown> | null {
  try {
    const value: unknown = JSON.parse(text);
    return typeof value === 'object' && value !== null && !Array.isArray(value) ? (value as Record<string, unknown>) : null;
  } catch {
    return null;
  }
}

const stringOrNull = (v: unknown): string | null => (typeof v === 'string' ? v : null);

/** `<ledger>.lock`, created exclusively; waits for another run holding it, up to LOCK_WAIT_MS. */
async function takeLock(ledgerPath: string): Promise<string> {
  const lock = `${ledgerPath}.lock`;
  const deadline = Date.now() + LOCK_WAIT_MS;
  for (;;) {
    try {
      const handle = await open(lock, 'wx');
      await handle.write(`${process.pid}\n`);
      await handle.close();
      return lock;
    } catch (err) {
      if (errorCode(err) !== 'EEXIST') throw new AuditError(`Cannot lock the ledger "${ledgerPath}": ${fileProblem(err)}`);
      if (Date.now() > deadline) {
        throw new AuditError(`Cannot append to the ledger "${ledgerPath}": "${lock}" has been held for ${LOCK_WAIT_MS / 1000} s (remove it if no vibgate run is using the ledger)`);
      }
      await sleep(50);
    }
  }
}
