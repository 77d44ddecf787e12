// A recording's content identity: the SHA-256 of its bytes, for files whose size and modification time cannot be trusted alone.
// Its own file, so that a worker hashing a recording loads neither the store nor the cache keys.
import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { requireRegularFile } from '../../stages/read/regular-file.js';

/** SHA-256 of a file's bytes, streamed. */
export function hashFile(path: string): Promise<string> {
  return new Promise((resolve, reject) => {
    // A pipe or a device would never end; its reduction says why it fails.
    requireRegularFile(path);
    const h = createHash('sha256');
    createReadStream(path).on('data', (d) => h.update(d)).on('error', reject).on('end', () => resolve(h.digest('hex')));
  });
}
