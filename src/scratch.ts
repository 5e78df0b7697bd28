import { createHash } from 'node:crypto';
import { accessSync, constants, mkdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';

/**
 * `preferred` (a folder under the project's .errata/) when it can be created and written; otherwise,
 * in a read-only checkout, a folder for the same purpose under the system's temporary folder, named
 * by a hash of `preferred` so each project keeps its own. Read-only commands then still work.
 *
 * @example
 *   writableDir('/srv/study/.errata/tmp') // '/srv/study/.errata/tmp', or '/tmp/errata-3f2a9c0d1b7e/tmp'
 */
export function writableDir(preferred: string): string {
  if (canWriteTo(preferred)) return preferred;
  const fallback = path.join(tmpdir(), `errata-${createHash('sha1').update(path.dirname(preferred)).digest('hex').slice(0, 12)}`, path.basename(preferred));
  mkdirSync(fallback, { recursive: true });
  return fallback;
}

/** Whether `dir` exists (it is made if missing) and this process may write in it. */
export function canWriteTo(dir: string): boolean {
  try {
    mkdirSync(dir, { recursive: true });
    accessSync(dir, constants.W_OK);
    return true;
  } catch {
    return false;
  }
}
