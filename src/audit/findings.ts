import { UsageError } from '../errors.js';

/**
 * What `verify` found about one thing: `ok` it is as recorded, `fail` it differs (or cannot
 * be proven, e.g. a missing file), `note` worth knowing but not a failure (an unpinned key).
 */
export interface AuditFinding {
  check: 'signature' | 'recording' | 'rule-file' | 'ledger';
  status: 'ok' | 'fail' | 'note';
  /** The file concerned as the record names it, or null for the record or the ledger itself. */
  subject: string | null;
  message: string;
  /** For a hash comparison: the SHA-256 in the record and the one of the file now (hex). */
  sha256?: { recorded: string; now: string | null };
}

/** A record, key or ledger that cannot be read or used at all (exit 2: nothing was checked). */
export class AuditError extends UsageError {}

/** `1a2b3c4d5e6f…`: enough of a hash to tell two apart in a message; findings keep the whole. */
export const shortHash = (hex: string): string => `${hex.slice(0, 12)}…`;

export const errorCode = (err: unknown): string | undefined => (err as NodeJS.ErrnoException | null)?.code;

/** A file-system error in words, for messages (`no such file`, not `ENOENT: ...`). */
export function fileProblem(err: unknown): string {
  switch (errorCode(err)) {
    case 'ENOENT':
      return 'no such file';
    case 'EACCES':
    case 'EPERM':
      return 'permission denied';
    case 'EISDIR':
      return 'is a directory';
    default:
      return (err as Error).message;
  }
}
