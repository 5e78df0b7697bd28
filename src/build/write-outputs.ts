import { copyFileSync, existsSync, mkdirSync, readFileSync, renameSync, rmSync, unlinkSync, writeFileSync } from 'node:fs';
import { randomBytes } from 'node:crypto';
import path from 'node:path';
import { ErrataError } from '../errors.js';
import { ident, literal } from '../engine/sql.js';
import { FORMULA_STARTS } from '../engine/formula-guard.js';
import { neutraliseFormulaSql, textSql } from '../engine/value-text.js';
import { valueTypeOf } from '../engine/column-types.js';
import { keyOrder } from './order.js';
import { VERSION } from '../version.js';
import { faultPoint } from '../fault.js';
import type { ProjectBuild, TableBuild } from './build-project.js';
import { sha256Of, sha256OfFile } from './hash.js';
import { LINEAGE_COLUMNS } from '../corrections/apply-corrections.js';
import { MANIFEST_FILE, parseManifest, renderManifest, type Manifest, type TableManifest } from './manifest.js';
import { removeAbandoned } from '../process-alive.js';

/** Outputs written to a staging folder, hashed, not yet in place. */
export interface StagedOutputs {
  stageDir: string;
  /** Repository-relative path → staged file. */
  files: Map<string, string>;
  manifest: Manifest;
}

/**
 * Write each table's clean CSV and lineage Parquet into a fresh staging folder under `workDir`
 * (the one folder the locked-down engine may write to), then the manifest. The CSV dialect is fixed:
 * comma, double quotes where needed, missing as an empty field, the empty string as "", rows ordered
 * by key, numbers as DuckDB prints them (shortest text that reads back to the same value).
 */
export async function stageOutputs(build: ProjectBuild, workDir: string, root: string): Promise<StagedOutputs> {
  // Staging folders of builds that were killed.
  removeAbandoned(workDir, /^stage-(\d+)-/);
  const stageDir = path.join(workDir, `stage-${process.pid}-${randomBytes(4).toString('hex')}`);
  mkdirSync(stageDir, { recursive: true });
  const files = new Map<string, string>();
  const manifest: Manifest = { tool: { name: 'errata', version: VERSION }, tables: existingTables(root, build) };
  try {
    for (const table of build.tables) {
      manifest.tables[table.config.name] = await stageTable(build, table, stageDir, files);
      faultPoint('staged-table');
    }
    const manifestFile = path.join(stageDir, 'manifest.json');
    writeFileSync(manifestFile, renderManifest(manifest));
    files.set(MANIFEST_FILE, manifestFile);
  } catch (error) {
    rmSync(stageDir, { recursive: true, force: true });
    throw error;
  }
  return { stageDir, files, manifest };
}

/** Entries of other tables in the current manifest survive a build of one table. */
function existingTables(root: string, build: ProjectBuild): Record<string, TableManifest> {
  const file = path.join(root, MANIFEST_FILE);
  if (!existsSync(file)) return {};
  const current = parseManifest(readFileSync(file, 'utf8'));
  if (!current) return {};
  const known = new Set(build.config.tables.map((t) => t.name));
  return Object.fromEntries(Object.entries(current.tables).filter(([name]) => known.has(name)));
}

async function stageTable(build: ProjectBuild, table: TableBuild, stageDir: string, files: Map<string, string>): Promise<TableManifest> {
  const { session } = build;
  const name = table.config.name;
  const dataFile = path.join(stageDir, `${name}.csv`);
  const lineageFile = path.join(stageDir, `${name}.lineage.parquet`);
  // Only DOUBLE needs errata's own rendering (whole values without ".0"); the CSV writer renders every
  // other type exactly as CAST to text would, and much faster. Text goes through the formula guard, so
  // a delivered `=HYPERLINK(...)` opens in a spreadsheet as text (drop one leading ' to recover it).
  const guarded = await columnsNeedingGuard(build, table);
  const select = table.columns.map((c) => `${cellSql(`src.${ident(c.name)}`, c.type, guarded.has(c.name))} AS ${ident(c.name)}`).join(', ');
  await session.run(`COPY (SELECT ${select} FROM ${ident(table.cleanTable)} AS src ORDER BY ${keyOrder(table.config.key, 'src')})
    TO ${literal(dataFile)} (FORMAT csv, HEADER true, DELIMITER ',', QUOTE '"', ESCAPE '"', NULL '', NEW_LINE '\\n')`);
  // The data file is hashed while the engine writes the lineage: one waits on the disk and this
  // thread, the other on the engine's threads.
  const [dataHash] = await Promise.all([
    sha256OfFile(dataFile),
    session.run(`COPY (SELECT ${LINEAGE_COLUMNS.map((c) => ident(c)).join(', ')} FROM ${ident(table.lineageTable)}
        ORDER BY "correction", "step", "key" NULLS FIRST, "column" NULLS FIRST, "change")
      TO ${literal(lineageFile)} (FORMAT parquet, COMPRESSION zstd, ROW_GROUP_SIZE 1000000)`),
  ]);
  const records = await session.one<{ n: bigint }>(`SELECT count(*) AS n FROM ${ident(table.lineageTable)}`);
  files.set(table.config.output, dataFile);
  files.set(table.config.lineage, lineageFile);
  return {
    inputs: table.inputs,
    sources: table.sources,
    outputs: {
      data: { path: table.config.output, sha256: dataHash, rows: table.rows, columns: table.columns.length },
      lineage: { path: table.config.lineage, sha256: await sha256OfFile(lineageFile), records: Number(records.n) },
    },
  };
}

function cellSql(valueSql: string, sqlType: string, guarded: boolean): string {
  if (valueTypeOf(sqlType) === 'number') return textSql(valueSql, sqlType);
  if (guarded) return neutraliseFormulaSql(valueSql);
  return valueSql;
}

/**
 * The text columns holding at least one value whose first character could start a formula: only those
 * go through the formula guard, which costs a regular expression per cell. One pass over the table.
 */
async function columnsNeedingGuard(build: ProjectBuild, table: TableBuild): Promise<Set<string>> {
  const text = table.columns.filter((c) => c.type === 'VARCHAR');
  if (text.length === 0) return new Set();
  const starts = FORMULA_STARTS.map((ch) => ch.codePointAt(0)).join(', ');
  const row = await build.session.one<Record<string, boolean | null>>(
    `SELECT ${text.map((c, i) => `bool_or(ord(${ident(c.name)}) IN (${starts})) AS "g${i}"`).join(', ')} FROM ${ident(table.cleanTable)}`,
  );
  return new Set(text.filter((_, i) => row[`g${i}`] === true).map((c) => c.name));
}

/**
 * Move staged outputs into place, one rename each, the manifest last: a build stopped at any moment
 * leaves every output either wholly old or wholly new, never half written.
 */
export function publishOutputs(staged: StagedOutputs, root: string): string[] {
  const written: string[] = [];
  const order = [...staged.files.keys()].sort((a, b) => (a === MANIFEST_FILE ? 1 : b === MANIFEST_FILE ? -1 : a < b ? -1 : 1));
  try {
    for (const relative of order) {
      const target = path.join(root, relative);
      mkdirSync(path.dirname(target), { recursive: true });
      moveInto(staged.files.get(relative)!, target);
      written.push(relative);
      faultPoint(`published-${written.length}`);
    }
  } catch (error) {
    throw new ErrataError('OUTPUT_WRITE', `could not put outputs in place: ${(error as Error).message}`, {
      hint: 'Check that the clean/ folder is writable and the disk not full; earlier outputs were left as they were.',
      data: { file: written.length ? order[written.length] : order[0] },
      cause: error,
    });
  } finally {
    rmSync(staged.stageDir, { recursive: true, force: true });
  }
  return written;
}

/** rename() is atomic on one file system; across devices copy to a temp name beside the target first. */
function moveInto(source: string, target: string): void {
  try {
    renameSync(source, target);
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code !== 'EXDEV') throw error;
    const temp = `${target}.${process.pid}.tmp`;
    copyFileSync(source, temp);
    renameSync(temp, target);
    unlinkSync(source);
  }
}

export function discardStaged(staged: StagedOutputs): void {
  rmSync(staged.stageDir, { recursive: true, force: true });
}

export { sha256Of };
