import { unlinkSync } from 'node:fs';
import { open, realpath, rename, stat, unlink } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import { randomBytes } from 'node:crypto';

/** Temporary files being written now; a signal handler removes them before the process exits. */
const inFlight = new Set<string>();

/**
 * Writes a file atomically: a temporary file in the same directory, flushed to disk, then
 * renamed over the target. A run killed half-way leaves the old file (or none), never a
 * half-written JUnit file that a CI server would read as "no failures"; a failed write
 * (a full disk) removes the temporary file and leaves the target as it was.
 *
 * A target that exists and is not a regular file (`/dev/stdout`, a named pipe, `/dev/full`)
 * is written directly: renaming over it would replace the device node or the pipe. A
 * symbolic link to a regular file is followed: the file it points at is replaced, the
 * link is kept.
 */
export async function writeFileAtomic(path: string, text: string): Promise<void> {
  const info = await stat(path).catch((err: NodeJS.ErrnoException) => {
    if (err.code === 'ENOENT') return undefined;
    throw err;
  });
  if (info?.isDirectory()) throw Object.assign(new Error(`"${path}" is a directory`), { code: 'EISDIR' });
  if (info !== undefined && !info.isFile()) {
    const device = await open(path, 'w');
    try {
      await device.writeFile(text, 'utf8');
    } finally {
      await device.close();
    }
    return;
  }
  const target = info === undefined ? path : await realpath(path);
  const tmp = join(dirname(target), `.${basename(target)}.${process.pid}.${randomBytes(4).toString('hex')}.tmp`);
  inFlight.add(tmp);
  try {
    const handle = await open(tmp, 'wx');
    try {
      await handle.writeFile(text, 'utf8');
      await handle.sync();
    } catch (err) {
      await handle.close().catch(() => {});
      await unlink(tmp).catch(() => {});
      throw err;
    }
    await handle.close();
    try {
      await rename(tmp, target);
    } catch (err) {
      await unlink(tmp).catch(() => {});
      throw err;
    }
  } finally {
    inFlight.delete(tmp);
  }
}

/**
 * Removes the temporary files of writes still in progress, synchronously: for a signal
 * handler that is about to exit the process. The targets are left as they were.
 */
export function removeTemporaryFiles(): void {
  for (const tmp of inFlight) {
    try {
      unlinkSync(tmp);
    } catch {
      // not created yet, or already renamed: nothing to remove
    }
  }
  inFlight.clear();
}

/** A failed write in plain words: what a user can act on (a full disk, a missing directory). */
export function describeWriteError(path: string, err: unknown): string {
  const code = (err as NodeJS.ErrnoException | undefined)?.code;
  switch (code) {
    case 'ENOSPC':
      return 'no space left on the device (ENOSPC)';
    case 'EDQUOT':
      return 'the disk quota is exceeded (EDQUOT)';
    case 'ENOENT':
    case 'ENOTDIR':
      return `the directory "${dirname(path)}" does not exist`;
    case 'EACCES':
    case 'EPERM':
      return `permission denied (cannot create a file in "${dirname(path)}")`;
    case 'EISDIR':
      return 'is a directory';
    case 'EROFS':
      return 'the file system is read-only (EROFS)';
    default:
      return err instanceof Error ? err.message : String(err);
  }
}
