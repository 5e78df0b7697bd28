import { createHash } from 'node:crypto';
import { mkdirSync, readFileSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
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

/** Keep an answer: written beside its place and renamed, so a reader never sees half an entry. */
export function writeCachedResult(cache: ResultCache, id: string, value: unknown): void {
  const file = path.join(cache.dir, `${id}.json`);
  const temp = `${file}.${process.pid}.tmp`;
  try {
    mkdirSync(cache.dir, { recursive: true });
    writeFileSync(temp, JSON.stringify(value));
    renameSync(temp, file);
  } catch {
    // A cache that cannot be written only costs time on the next run.
    try {
      rmSync(temp, { force: true });
    } catch {
      /* nothing was written */
    }
  }
}
