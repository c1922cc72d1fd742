import { createHash } from 'node:crypto';
import { open } from 'node:fs/promises';

/**
 * SHA-256 (hex) of a file's bytes, read sequentially alongside the statistics pass through
 * one reused 1 MiB buffer (a read stream would allocate a new buffer per chunk).
 */
export async function sha256File(path: string): Promise<string> {
  const hash = createHash('sha256');
  const handle = await open(path, 'r');
  try {
    const buffer = Buffer.allocUnsafeSlow(1 << 20);
    for (;;) {
      const { bytesRead } = await handle.read(buffer, 0, buffer.length, null);
      if (bytesRead === 0) break;
      hash.update(buffer.subarray(0, bytesRead));
    }
  } finally {
    await handle.close();
  }
  return hash.digest('hex');
}
