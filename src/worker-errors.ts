/**
 * Errors across a worker-thread boundary: a worker posts what went wrong as plain data, the
 * parent turns it back into the error the user would have seen had the work run in its own
 * thread (a RecordingError keeps its file, offset and exact message).
 */
import { RecordingError, UsageError } from './errors.js';

export interface WorkerFailure {
  ok: false;
  name: string;
  message: string;
  file?: string;
  offset?: number;
}

/** What a worker posts for an error it caught. */
export function failureOf(err: unknown): WorkerFailure {
  return {
    ok: false,
    name: err instanceof Error ? err.name : 'Error',
    message: err instanceof Error ? err.message : String(err),
    file: (err as { file?: string }).file,
    offset: (err as { offset?: number }).offset,
  };
}

/**
 * The error a failure stands for: vibgate's own errors as they were; anything else as
 * `otherwise(message)` (the caller words it for its own kind of work).
 */
export function errorOf(m: WorkerFailure, path: string, otherwise: (message: string) => Error): Error {
  if (m.name === 'RecordingError') {
    const e = new RecordingError(m.file ?? path, '', m.offset);
    e.message = m.message;
    return e;
  }
  if (m.name === 'UsageError') return new UsageError(m.message);
  return otherwise(m.message);
}
