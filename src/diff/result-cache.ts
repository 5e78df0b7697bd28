import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { writeFileAtomically } from '../write-file.js';
import { VERSION } from '../version.js';

/**
 * Where finished answers are kept, one JSON file per question: revision diffs under
 * `.errata/cache/diffs`, reviews under `.errata/cache/reviews`.
 */
export interface ResultCache {
  dir: string;
}

/** Bump when the cached form changes, so older entries are never read as the new form. */
const FORMAT = 1;

/**
 * The name of an answer's cache entry: a hash of everything it depends on (for a diff, each end's
 * configuration and the git blob ids of its deliveries, codebooks and corrections, and the options; for
 * a review, the two commit ids) and the tool's version. Content-addressed like the parse cache, so an
 * entry is never stale.
 */
export function resultCacheId(parts: unknown): string {
  return createHash('sha256').update(JSON.stringify({ format: FORMAT, version: VERSION, parts })).digest('hex');
}

/** A cached answer, or null when there is none or it cannot be read (it is then computed again). */
export function readCachedResult<T>(cache: ResultCache, id: string): T | null {
  try {
    return JSON.parse(readFileSync(path.join(cache.dir, `${id}.json`), 'utf8')) as T;
  } catch {
    return null;
  }
}

/** Keep an answer, written atomically so a reader never sees half an entry. */
export function writeCachedResult(cache: ResultCache, id: string, value: unknown): void {
  try {
    writeFileAtomically(path.join(cache.dir, `${id}.json`), JSON.stringify(value));
  } catch {
    // A cache that cannot be written only costs time on the next run.
  }
}
