import { resolve } from 'node:path';
import { AuditError, type AuditFinding } from '../audit/findings.js';
import { verifyRecord } from '../audit/verify.js';
import { ExitCode, type CliIo } from './io.js';

export interface VerifyCliOptions {
  /** Public key file the record must be signed with. */
  key?: string;
  /** Ledger file the record must be in. */
  ledger?: string;
  /** Print the findings as JSON instead of lines for people. */
  json?: boolean;
  /**
   * Where the screening ran: the record's relative recording and rule-file paths are taken
   * from here (default: the working directory). The record, key and ledger paths given on
   * the command line are always taken from the working directory.
   */
  dir?: string;
}

const WORD: Record<AuditFinding['status'], string> = { ok: 'ok', fail: 'FAIL', note: 'note' };

/**
 * `vibgate verify RECORD`: is this record what was screened, unchanged, signed by whom,
 * and in the ledger? One line per check. Exit 0 every check holds (notes allowed), 1
 * something differs or is missing, 2 the record, key or ledger cannot be read.
 */
export async function runVerify(recordPath: string, io: CliIo, options: VerifyCliOptions = {}): Promise<number> {
  let findings: AuditFinding[];
  try {
    ({ findings } = await verifyRecord(recordPath, {
      key: options.key,
      ledger: options.ledger,
      cwd: options.dir === undefined ? io.cwd : resolve(io.cwd, options.dir),
      argumentsDir: io.cwd,
    }));
  } catch (err) {
    if (err instanceof AuditError) {
      io.stderr.write(`vibgate: ${err.message}\n`);
      io.stderr.write('vibgate: nothing was verified\n');
      return ExitCode.usage;
    }
    throw err;
  }
  const failed = findings.filter((f) => f.status === 'fail').length;
  if (options.json) {
    io.stdout.write(JSON.stringify({ record: recordPath, ok: failed === 0, findings }, null, 2) + '\n');
  } else {
    for (const f of findings) io.stdout.write(`${WORD[f.status].padEnd(5)} ${f.message}\n`);
    io.stdout.write(
      failed === 0
        ? `VERIFIED "${recordPath}": ${findings.length} checks, none differs\n`
        : `NOT VERIFIED "${recordPath}": ${failed} of ${findings.length} checks differ\n`,
    );
  }
  return failed === 0 ? ExitCode.ok : ExitCode.failed;
}
