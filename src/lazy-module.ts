import { createRequire } from 'node:module';

const requireHere = createRequire(import.meta.url);

/**
 * A package loaded on first use, so commands that never need it do not pay for it, and loaded through
 * require: importing a CommonJS package as an ES module makes Node parse every file it re-exports to
 * find their names (for @duckdb/node-api 0.30 s of start-up against 0.13 s; for isomorphic-git 0.12 s
 * against 0.05 s).
 *
 * @example
 *   const duckdb = onFirstUse<typeof DuckDB>('@duckdb/node-api');
 *   duckdb().DuckDBInstance.create(':memory:');
 */
export function onFirstUse<T>(name: string): () => T {
  let loaded: T | null = null;
  return () => (loaded ??= requireHere(name) as T);
}
