import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, renameSync } from 'node:fs';
import path from 'node:path';
import { ErrataError } from '../errors.js';
import { columnNames, formatOf, loadFile, stackTables, type InputFile } from '../engine/load-table.js';
import { ident, literal } from '../engine/sql.js';
import { assertKeyValid } from '../engine/keys.js';
import type { Session } from '../engine/session.js';
import type { ProjectTree } from '../git/tree.js';
import type { TableConfig } from '../project/config.js';

export interface RawInput {
  path: string;
  blob: string;
}

/**
 * Parsed deliveries kept as Parquet under `dir`, named by the git blob id of the file and the way it
 * was read, so an entry can never be stale: the same bytes read the same way give the same table.
 */
export interface RawCache {
  dir: string;
  /** Write entries for files parsed now (reading entries is always allowed). */
  write: boolean;
}

/** Bump when loading changes what a file parses to, so old cache entries are not used. */
const LOADER_VERSION = 1;

function cacheFile(cache: RawCache, blob: string, input: Omit<InputFile, 'localPath'>): string {
  const how = createHash('sha1').update(JSON.stringify([LOADER_VERSION, input.format, input.delimiter ?? null])).digest('hex').slice(0, 8);
  return path.join(cache.dir, `${blob}-${how}.parquet`);
}

async function loadCached(session: Session, tree: ProjectTree, input: Omit<InputFile, 'localPath'>, target: string, blob: string, cache?: RawCache): Promise<string[]> {
  const cached = cache ? cacheFile(cache, blob, input) : null;
  if (cached && existsSync(cached)) {
    await session.run(`CREATE OR REPLACE TABLE ${ident(target)} AS SELECT * FROM read_parquet(${literal(cached)})`);
    return columnNames(session, target);
  }
  const columns = await loadFile(session, { ...input, localPath: await tree.localPath(input.name) }, target);
  if (cached && cache?.write && input.format !== 'parquet') {
    mkdirSync(cache.dir, { recursive: true });
    const temp = `${cached}.${process.pid}.tmp`;
    await session.run(`COPY ${ident(target)} TO ${literal(temp)} (FORMAT parquet, COMPRESSION zstd)`);
    renameSync(temp, cached);
  }
  return columns;
}

/**
 * Load a table's raw delivery (the newest file of its folder, or all of them stacked) into `target`,
 * as text, and check its key. Raw files are only ever read.
 */
export async function loadRawTable(session: Session, tree: ProjectTree, table: TableConfig, target: string, cache?: RawCache): Promise<{ inputs: RawInput[]; columns: string[] }> {
  const candidates = (await tree.list(table.raw)).filter((f) => formatOf(f, table.format) !== null);
  if (candidates.length === 0) {
    throw new ErrataError('INPUT_MISSING', `no data file for table "${table.name}" under ${table.raw}`, {
      hint: 'Put the delivery (CSV, TSV, Parquet or JSON lines) under that path, or fix `raw:` in errata.yaml.',
      data: { file: 'errata.yaml', line: table.line },
    });
  }
  const chosen = table.deliveries === 'latest' ? [candidates[candidates.length - 1]] : candidates;
  const inputs: RawInput[] = [];
  const parts: string[] = [];
  let columns: string[] = [];
  for (const [index, file] of chosen.entries()) {
    const input = { name: file, format: formatOf(file, table.format)!, delimiter: table.delimiter };
    const part = chosen.length === 1 ? target : `${target}__part${index}`;
    const blob = await tree.blobId(file);
    columns = await loadCached(session, tree, input, part, blob, cache);
    for (const k of table.key) {
      if (!columns.includes(k)) {
        throw new ErrataError('KEY_COLUMN_MISSING', `the key column "${k}" is not in ${path.basename(file)}`, {
          hint: `Its columns are: ${columns.slice(0, 12).join(', ')}${columns.length > 12 ? ', ...' : ''}. Fix \`key:\` in errata.yaml, or ask for a delivery with that column.`,
          data: { file, line: 1, column: k },
        });
      }
    }
    parts.push(part);
    inputs.push({ path: file, blob });
  }
  if (parts.length > 1) await stackTables(session, parts, target);
  await assertKeyValid(session, target, table.key, columns, chosen.length === 1 ? chosen[0] : table.raw);
  return { inputs, columns };
}
