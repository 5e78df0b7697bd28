import { createHash } from 'node:crypto';
import { createReadStream, statSync } from 'node:fs';
import { readFile } from 'node:fs/promises';

/**
 * Reads of 4 MiB: with the default 64 KiB, hashing a 100 MB file took 1,600 round trips through the
 * thread pool and 0.09-0.15 s, against 0.07-0.08 s.
 */
const READ_BYTES = 4 << 20;

/**
 * The hex digest of `prefix` followed by a file's bytes, read in large pieces. A file smaller than
 * one piece is read whole: a stream would still allocate the full 4 MiB for it, and planning a
 * build hashes some thirty small correction files (120 ms, mostly garbage collection, that way).
 */
export async function hashOfFile(file: string, algorithm: 'sha1' | 'sha256', prefix = ''): Promise<string> {
  const hash = createHash(algorithm);
  if (prefix) hash.update(prefix);
  if (statSync(file).size < READ_BYTES) return hash.update(await readFile(file)).digest('hex');
  for await (const chunk of createReadStream(file, { highWaterMark: READ_BYTES })) hash.update(chunk as Buffer);
  return hash.digest('hex');
}
