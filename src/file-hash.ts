import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';

/**
 * Reads of 4 MiB: with the default 64 KiB, hashing a 100 MB file took 1,600 round trips through the
 * thread pool and 0.09-0.15 s, against 0.07-0.08 s.
 */
const READ_BYTES = 4 << 20;

/** The hex digest of `prefix` followed by a file's bytes, read in large pieces. */
export async function hashOfFile(file: string, algorithm: 'sha1' | 'sha256', prefix = ''): Promise<string> {
  const hash = createHash(algorithm);
  if (prefix) hash.update(prefix);
  for await (const chunk of createReadStream(file, { highWaterMark: READ_BYTES })) hash.update(chunk as Buffer);
  return hash.digest('hex');
}
