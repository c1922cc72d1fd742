import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';

/** SHA-256 (hex) of a file's bytes, read sequentially alongside the statistics pass. */
export function sha256File(path: string): Promise<string> {
  return new Promise((resolve, reject) => {
    const hash = createHash('sha256');
    createReadStream(path, { highWaterMark: 1 << 20 })
      .on('data', (chunk) => hash.update(chunk))
      .on('error', reject)
      .on('end', () => resolve(hash.digest('hex')));
  });
}
