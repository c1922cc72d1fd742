import { describe, expect, it, beforeEach } from 'vitest';
import { createHash } from 'node:crypto';
import { mkdtemp, readFile, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { appendLedger, verifyLedger } from '../../src/audit/ledger.js';
import { AuditError } from '../../src/audit/findings.js';

const sha256 = (text: string) => createHash('sha256').update(text, 'utf8').digest('hex');
const short = (hex: string) => `${hex.slice(0, 12)}…`;
const record = (n: number) => `${JSON.stringify({ createdAt: `2026-01-0${n}T00:00:00.000Z`, verdict: n % 2 ? 'pass' : 'fail', rules: { sha256: 'a'.repeat(64) } }, null, 2)}\n`;

let ledger = '';
beforeEach(async () => {
  ledger = join(await mkdtemp(join(tmpdir(), 'vibgate-ledger-')), 'ledger.jsonl');
});

async function ledgerOf(n: number): Promise<string[]> {
  for (let i = 1; i <= n; i++) await appendLedger(ledger, record(i), { now: () => new Date(Date.UTC(2026, 0, i, 12)) });
  return (await readFile(ledger, 'utf8')).split('\n').slice(0, -1);
}

const failures = async (text?: string) => (await verifyLedger(ledger, text)).findings.filter((f) => f.status === 'fail').map((f) => f.message);

describe('appendLedger()', () => {
  it('writes one JSON line per record, chained by the SHA-256 of the line before', async () => {
    const lines = await ledgerOf(3);
    const entries = lines.map((l) => JSON.parse(l));
    expect(entries.map((e) => e.seq)).toEqual([1, 2, 3]);
    expect(entries[0].previousSha256).toBeNull();
    // lines are written canonically, so the hash of a line's bytes (sha256sum) is the link
    expect(entries[1].previousSha256).toBe(sha256(lines[0]));
    expect(entries[2].previousSha256).toBe(sha256(lines[1]));
    expect(entries[1]).toMatchObject({
      recordSha256: sha256(record(2)),
      recordCreatedAt: '2026-01-02T00:00:00.000Z',
      verdict: 'fail',
      rulesSha256: 'a'.repeat(64),
      signedBy: null,
      time: '2026-01-02T12:00:00.000Z',
    });
  });

  it('returns the new line and the head hash', async () => {
    await ledgerOf(1);
    const appended = await appendLedger(ledger, record(2));
    const lines = (await readFile(ledger, 'utf8')).split('\n');
    expect(appended.line).toBe(2);
    expect(appended.headSha256).toBe(sha256(lines[1]));
  });

  it('takes turns when runs append at once: every seq once, the chain whole', async () => {
    await Promise.all([1, 2, 3, 4, 5, 6].map((i) => appendLedger(ledger, record(i))));
    const entries = (await readFile(ledger, 'utf8')).split('\n').slice(0, -1).map((l) => JSON.parse(l));
    expect(entries.map((e) => e.seq)).toEqual([1, 2, 3, 4, 5, 6]);
    expect(await failures()).toEqual([]);
  });

  it('refuses to append after a cut-off last line', async () => {
    await ledgerOf(2);
    const text = await readFile(ledger, 'utf8');
    await writeFile(ledger, text.slice(0, -10));
    await expect(appendLedger(ledger, record(3))).rejects.toThrow(AuditError);
    await expect(appendLedger(ledger, record(3))).rejects.toThrow(`Cannot append to the ledger "${ledger}": its last line is cut off (no newline at the end)`);
  });
});

describe('verifyLedger()', () => {
  it('reports an unbroken chain with its head hash', async () => {
    const lines = await ledgerOf(4);
    const result = await verifyLedger(ledger);
    expect(result.findings).toEqual([
      { check: 'ledger', status: 'ok', subject: null, message: `the ledger's 4 lines chain unbroken (head sha256 ${short(sha256(lines[3]))})` },
    ]);
    expect(result.headSha256).toBe(sha256(lines[3]));
  });

  it('still chains when a line is re-spaced (the hash is over canonical JSON)', async () => {
    const lines = await ledgerOf(3);
    lines[1] = JSON.stringify(JSON.parse(lines[1]), null, 1).replace(/\n/g, ' ');
    await writeFile(ledger, lines.join('\n') + '\n');
    expect(await failures()).toEqual([]);
  });

  it('names the line after a deleted line', async () => {
    const lines = await ledgerOf(5);
    lines.splice(2, 1); // delete line 3
    await writeFile(ledger, lines.join('\n') + '\n');
    expect(await failures()).toEqual(['ledger line 3: previous hash does not match line 2 (seq 4 follows seq 2: 1 line deleted before it?)']);
  });

  it('names an edited line', async () => {
    const lines = await ledgerOf(4);
    lines[1] = lines[1].replace('"verdict":"fail"', '"verdict":"pass"');
    await writeFile(ledger, lines.join('\n') + '\n');
    expect(await failures()).toEqual(['ledger line 3: previous hash does not match line 2 (line 2 edited?)']);
  });

  it('names reordered lines', async () => {
    const lines = await ledgerOf(4);
    [lines[1], lines[2]] = [lines[2], lines[1]];
    await writeFile(ledger, lines.join('\n') + '\n');
    expect(await failures()).toEqual([
      'ledger line 2: previous hash does not match line 1 (it follows line 3: lines reordered?)',
      'ledger line 3: previous hash does not match line 2 (it follows line 1: lines reordered?)',
      'ledger line 4: previous hash does not match line 3 (it follows line 2: lines reordered?)',
    ]);
  });

  it('notices lines deleted from the start', async () => {
    const lines = await ledgerOf(3);
    await writeFile(ledger, lines.slice(1).join('\n') + '\n');
    expect(await failures()).toEqual(['ledger line 1 (seq 2) has a previous hash or a seq other than 1: the lines before it were deleted?']);
  });

  it('names a line that is not an entry, and an empty line', async () => {
    const lines = await ledgerOf(3);
    await writeFile(ledger, [lines[0], '{"seq": 2', '', lines[2]].join('\n') + '\n');
    expect(await failures()).toEqual(['ledger line 2 is not a ledger entry (edited or cut off?)', 'ledger line 3 is empty (edited?)']);
  });

  it('finds a record in the ledger by its bytes', async () => {
    await ledgerOf(3);
    const result = await verifyLedger(ledger, record(2));
    expect(result.recordLine).toBe(2);
    expect(result.findings[1].message).toBe('the record is ledger line 2 (seq 2, entered 2026-01-02T12:00:00.000Z)');
  });

  it('says a record was changed after it was entered, naming its line', async () => {
    await ledgerOf(3);
    const changed = record(2).replace('"fail"', '"pass"');
    expect(await failures(changed)).toEqual([
      `the record is not in the ledger as it is now: line 2 was entered for the record made at 2026-01-02T00:00:00.000Z, ` +
        `with sha256 ${short(sha256(record(2)))}, and the record's sha256 is now ${short(sha256(changed))}: the record was changed after it was entered`,
    ]);
  });

  it('says a record that was never entered is not in the ledger', async () => {
    await ledgerOf(2);
    expect(await failures(record(7))).toEqual([
      `the record is not in the ledger (no line has its sha256 ${short(sha256(record(7)))}): it was never entered, or its line was deleted`,
    ]);
  });

  it('throws AuditError for a ledger that cannot be read', async () => {
    await expect(verifyLedger(ledger)).rejects.toThrow(`Cannot read the ledger "${ledger}": no such file`);
  });
});

describe('verifyLedger() on a copied line', () => {
  it('a copied line breaks the chain at the copy', async () => {
    const lines = await ledgerOf(2);
    // line 2 copied after itself: its link names line 1, whose hash is not line 2's
    await writeFile(ledger, [lines[0], lines[1], lines[1]].join('\n') + '\n');
    expect(await failures()).toEqual(['ledger line 3: previous hash does not match line 2 (it follows line 1: lines reordered?)']);
  });
});
