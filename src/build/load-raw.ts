import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, renameSync, rmSync } from 'node:fs';
import { faultPoint } from '../fault.js';
import path from 'node:path';
import { ErrataError } from '../errors.js';
import { columnNames, formatOf, lineOfDataRow, loadFile, stackTables, type InputFile } from '../engine/load-table.js';
import { ident, literal } from '../engine/sql.js';
import { assertKeyValid } from '../engine/keys.js';
import type { Session } from '../engine/session.js';
import type { ProjectTree } from '../git/tree.js';
import type { TableConfig } from '../project/config.js';
import { removeAbandoned } from '../process-alive.js';
import { canWriteTo } from '../scratch.js';

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

/**
 * An entry appears under its final name only by rename, after it was written in full, so a run
 * killed mid-write leaves at most a `.tmp` file, which is never read and is removed by a later run.
 * An entry that cannot be read all the same (a damaged disk) is parsed again and replaced.
 */
async function loadCached(session: Session, tree: ProjectTree, input: Omit<InputFile, 'localPath'>, target: string, blob: string, cache?: RawCache): Promise<string[]> {
  const cached = cache ? cacheFile(cache, blob, input) : null;
  if (cached && existsSync(cached)) {
    try {
      await session.run(`CREATE OR REPLACE TABLE ${ident(target)} AS SELECT * FROM read_parquet(${literal(cached)})`);
      return await columnNames(session, target);
    } catch {
      rmSync(cached, { force: true });
    }
  }
  const localPath = await tree.localPath(input.name);
  const columns = await loadFile(session, { ...input, localPath }, target);
  if (cached && cache?.write && input.format !== 'parquet') await writeCacheEntry(session, target, cached);
  return columns;
}

async function writeCacheEntry(session: Session, table: string, cached: string): Promise<void> {
  const dir = path.dirname(cached);
  try {
    mkdirSync(dir, { recursive: true });
  } catch {
    return; // a read-only checkout: work without the cache
  }
  // `.tmp` files of runs that were killed while writing.
  removeAbandoned(dir, /\.(\d+)\.tmp$/);
  const temp = `${cached}.${process.pid}.tmp`;
  faultPoint('cache-start');
  try {
    await session.run(`COPY ${ident(table)} TO ${literal(temp)} (FORMAT parquet, COMPRESSION zstd)`);
  } catch (error) {
    rmSync(temp, { force: true });
    if (!existsSync(dir) || !canWriteTo(dir)) return;
    throw error;
  }
  faultPoint('cache-written');
  renameSync(temp, cached);
  faultPoint('cache-renamed');
}

/**
 * The files that make a table's raw delivery (the newest file of its folder, or all of them stacked),
 * with their blob ids; nothing is read yet, so a caller can tell from these whether it needs to.
 */
export async function planRawTable(tree: ProjectTree, table: TableConfig): Promise<RawInput[]> {
  const planned = await listRawTable(tree, table);
  await fillRawBlobs(tree, planned);
  return planned;
}

/** Fill in the blob ids `listRawTable` leaves empty, one file after another. */
export async function fillRawBlobs(tree: ProjectTree, inputs: readonly RawInput[]): Promise<void> {
  for (const input of inputs) input.blob = await tree.blobId(input.path);
}

/**
 * The files `planRawTable` names, their blob ids still to be filled in (empty): a caller without a
 * parse cache needs them only for the manifest, and can hash while the engine reads.
 */
export async function listRawTable(tree: ProjectTree, table: TableConfig): Promise<RawInput[]> {
  const candidates = (await tree.list(table.raw)).filter((f) => formatOf(f, table.format) !== null);
  if (candidates.length === 0) {
    throw new ErrataError('INPUT_MISSING', `no data file for table "${table.name}" under ${table.raw}`, {
      hint: 'Put the delivery (CSV, TSV, Parquet or JSON lines) under that path, or fix `raw:` in errata.yaml.',
      data: { file: 'errata.yaml', line: table.line },
    });
  }
  const chosen = table.deliveries === 'latest' ? [candidates[candidates.length - 1]] : candidates;
  return chosen.map((file) => ({ path: file, blob: '' }));
}

/**
 * Load a table's raw delivery (the files `planRawTable` names, planned here unless given) into
 * `target`, as text, and check its key. Raw files are only ever read.
 */
export async function loadRawTable(
  session: Session,
  tree: ProjectTree,
  table: TableConfig,
  target: string,
  cache?: RawCache,
  planned?: readonly RawInput[],
): Promise<{ inputs: RawInput[]; columns: string[] }> {
  const chosen = planned ?? (await planRawTable(tree, table));
  const parts: string[] = [];
  let columns: string[] = [];
  const inputOf = (file: string) => ({ name: file, format: formatOf(file, table.format)!, delimiter: table.delimiter });
  for (const [index, { path: file, blob }] of chosen.entries()) {
    const input = inputOf(file);
    const part = chosen.length === 1 ? target : `${target}__part${index}`;
    columns = await loadCached(session, tree, input, part, blob, cache);
    await assertHasRows(session, part, file);
    for (const k of table.key) {
      if (!columns.includes(k)) {
        throw new ErrataError('KEY_COLUMN_MISSING', `the key column "${k}" is not in ${path.basename(file)}`, {
          hint: `Its columns are: ${columns.slice(0, 12).join(', ')}${columns.length > 12 ? ', ...' : ''}. Fix \`key:\` in errata.yaml, or ask for a delivery with that column.`,
          data: { file, line: 1, column: k },
        });
      }
    }
    parts.push(part);
  }
  if (parts.length > 1) await stackTables(session, parts, target);
  // Rows of one file can be found again in it (read only if a key is wrong); stacked files are named by their folder.
  const only = chosen.length === 1 ? chosen[0].path : null;
  const lineOf = only
    ? async (row: number) => lineOfDataRow({ ...inputOf(only), localPath: await tree.localPath(only) }, columns.length, row)
    : undefined;
  await assertKeyValid(session, target, table.key, columns, only ?? table.raw, lineOf);
  return { inputs: [...chosen], columns };
}

/**
 * A delivery with a header and no rows is refused: taken as the latest delivery it would remove every
 * row from the clean data, which an export cut short must never do silently.
 */
async function assertHasRows(session: Session, table: string, file: string): Promise<void> {
  const { n } = await session.one<{ n: bigint }>(`SELECT count(*) AS n FROM ${ident(table)}`);
  if (Number(n) > 0) return;
  throw new ErrataError('INPUT_FORMAT', 'the delivery has no rows, only a header', {
    hint: 'Ask for the delivery again with its rows; if the table really is empty now, say so in a correction (a delete step) rather than with an empty file.',
    data: { file, line: 2 },
  });
}
