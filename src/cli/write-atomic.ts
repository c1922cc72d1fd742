import { open, rename, unlink } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import { randomBytes } from 'node:crypto';

/**
 * Writes a file atomically: a temporary file in the same directory, flushed to disk, then
 * renamed over the target. A run killed half-way leaves the old file (or none), never a
 * half-written JUnit file that a CI server would read as "no failures".
 */
export async function writeFileAtomic(path: string, text: string): Promise<void> {
  const tmp = join(dirname(path), `.${basename(path)}.${process.pid}.${randomBytes(4).toString('hex')}.tmp`);
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
    await rename(tmp, path);
  } catch (err) {
    await unlink(tmp).catch(() => {});
    throw err;
  }
}
