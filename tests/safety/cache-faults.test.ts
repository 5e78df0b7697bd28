import { readdirSync, readFileSync, statSync, truncateSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Session } from '../../src/engine/session.js';
import { literal } from '../../src/engine/sql.js';
import { errata, makeProject, removeDir } from '../helpers/project.js';

/**
 * Parsed deliveries are cached as Parquet under .errata/cache/tables. A run killed while writing an
 * entry (ERRATA_FAULT kill points in load-raw.ts) must never leave a truncated entry that a later
 * run reads back: the next run succeeds and answers exactly as a run with no cache at all.
 */

const rows = ['id,height,site'];
for (let i = 1; i <= 400; i++) rows.push(`${i},${(150 + ((i * 37) % 50)).toFixed(1)},${['N', 'S', 'E'][i % 3]}`);
const FILES = {
  'errata.yaml': 'tables:\n  t:\n    raw: raw/t/\n    key: id\n',
  'raw/t/delivery.csv': rows.join('\n') + '\n',
};

let root: string;
let reference: string;
const cacheDir = () => path.join(root, '.errata', 'cache', 'tables');
const entries = () => {
  try {
    return readdirSync(cacheDir()).sort();
  } catch {
    return [];
  }
};

beforeAll(async () => {
  root = await makeProject(FILES);
  // The answer with no cache entry to read (the first run parses the CSV itself).
  const first = await errata(root, ['profile', '--format', 'json']);
  expect(first.code).toBe(0);
  reference = first.stdout;
  removeDir(cacheDir());
});
afterAll(() => removeDir(root));

/** Read a cache entry with DuckDB, as an independent check that it is a whole Parquet file. */
async function readable(file: string): Promise<boolean> {
  const session = await Session.open();
  try {
    await session.all(`SELECT count(*) FROM read_parquet(${literal(file)})`);
    return true;
  } catch {
    return false;
  } finally {
    session.close();
  }
}

describe('a cache write killed at any point', () => {
  it.each(['cache-written', 'cache-renamed'])('killed at %s: no damaged entry, and the next run gives the same answer', async (point) => {
    removeDir(cacheDir());
    const killed = await errata(root, ['profile', '--format', 'json'], { ERRATA_FAULT: point });
    expect(killed.code).not.toBe(0);
    expect(killed.stdout).toBe('');
    const finals = entries().filter((f) => f.endsWith('.parquet'));
    // Only a completed write reaches its final name.
    expect(finals.length).toBe(point === 'cache-renamed' ? 1 : 0);
    for (const f of finals) expect(await readable(path.join(cacheDir(), f))).toBe(true);
    if (point === 'cache-written') expect(entries().some((f) => f.endsWith('.tmp'))).toBe(true);

    const next = await errata(root, ['profile', '--format', 'json']);
    expect(next.code).toBe(0);
    expect(next.stdout).toBe(reference);
    // The killed run's leftover temp file is gone, and the entry now exists whole.
    expect(entries().filter((f) => f.endsWith('.tmp'))).toEqual([]);
    expect(entries().filter((f) => f.endsWith('.parquet')).length).toBe(1);
    // Once the entry exists, a run reads it back and still agrees.
    if (point === 'cache-renamed') expect((await errata(root, ['profile', '--format', 'json'])).stdout).toBe(reference);
  });

  it('an entry damaged on disk is parsed again rather than trusted', async () => {
    const [entry] = entries().filter((f) => f.endsWith('.parquet'));
    const full = path.join(cacheDir(), entry);
    truncateSync(full, Math.floor(statSync(full).size / 2));
    expect(await readable(full)).toBe(false);
    const result = await errata(root, ['profile', '--format', 'json']);
    expect(result.code).toBe(0);
    expect(result.stdout).toBe(reference);
    expect(await readable(full)).toBe(true);
    expect(readFileSync(full).subarray(0, 4).toString()).toBe('PAR1'); // Parquet magic number (Apache Parquet format spec)
  });
});
