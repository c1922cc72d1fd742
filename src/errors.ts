/**
 * Errors a user sees. Every one names the file and says what is wrong, so the CLI
 * can print `message` alone and never a stack trace.
 */

/** A recording (or its sidecar) that cannot be read: truncated, corrupt or unsupported. */
export class RecordingError extends Error {
  override readonly name = 'RecordingError';
  /** The file the problem is in, as the user gave it. */
  readonly file: string;
  /** Byte offset of the problem in `file`, where one applies. */
  readonly offset: number | undefined;

  constructor(file: string, detail: string, offset?: number) {
    super(`Cannot read "${file}": ${detail}`);
    this.file = file;
    this.offset = offset;
  }
}

/** Wrong use of the command line or the library (nothing was screened). */
export class UsageError extends Error {
  override readonly name = 'UsageError';
}
