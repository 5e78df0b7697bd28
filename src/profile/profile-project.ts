import path from 'node:path';
import { correctProject, prepareProject, rawName, type BuildProgress, type PreparedProject, type TableBuild } from '../build/build-project.js';
import type { RawCache } from '../build/load-raw.js';
import type { Conflict } from '../corrections/apply-corrections.js';
import { applyColumnTypes, decideFromGroups, dropGroupedColumns } from '../engine/column-types.js';
import { Session } from '../engine/session.js';
import { ident } from '../engine/sql.js';
import type { ProjectTree } from '../git/tree.js';
import { declaredTypes } from '../project/codebook.js';
import { profileTable } from './profile-table.js';
import type { TableProfile } from './types.js';

export type ProfileProgress = BuildProgress | { phase: 'profile'; table: string; side: 'raw' | 'clean' };

export interface ProjectProfileOptions {
  tree: ProjectTree;
  /** One table; every table when absent. */
  table?: string;
  /** Profile the raw deliveries, as loaded and typed, before any correction. */
  raw: boolean;
  /** Profile the clean data: raw plus corrections, built in memory. */
  clean: boolean;
  /** Where DuckDB may spill; the only folder SQL can touch once inputs are loaded. */
  workDir: string;
  memoryLimit?: string;
  cache?: RawCache;
  onProgress?: (event: ProfileProgress) => void;
}

export interface ProjectTableProfile {
  name: string;
  raw: TableProfile | null;
  clean: TableProfile | null;
  /** Clean column name → the raw column it came from, for columns a correction renamed or converted. */
  renamed: Record<string, string>;
}

export interface ProjectProfile {
  tables: ProjectTableProfile[];
  /** Guarded edits that no longer match; the clean profile describes the build with them left out. */
  conflicts: Conflict[];
}

/**
 * Profile a project's tables as raw deliveries, clean builds, or both (for a comparison), in one
 * session: the deliveries are loaded once, the raw side is typed the way the build types it (the
 * codebook's declared types where every value fits, else what every value fits), and the clean side is
 * built with the corrections. Nothing is written.
 *
 * @example
 *   const { tables } = await profileProject({ tree, raw: true, clean: true, workDir: '.errata/tmp' });
 *   compareProfiles(tables[0].raw!, tables[0].clean!, tables[0].renamed);
 */
export async function profileProject(options: ProjectProfileOptions): Promise<ProjectProfile> {
  const session = await Session.open({ spillDir: path.join(options.workDir, 'spill'), memoryLimit: options.memoryLimit ?? '2GB' });
  try {
    const prepared = await prepareProject(session, options.tree, { table: options.table, cache: options.cache, onProgress: options.onProgress });
    await session.lockDown([options.workDir]);
    const raw = options.raw ? await profileLoadedTables(session, prepared, { keepText: options.clean, onProgress: options.onProgress }) : new Map<string, TableProfile>();
    const tables: ProjectTableProfile[] = prepared.tables.map(({ table }) => ({ name: table.name, raw: raw.get(table.name) ?? null, clean: null, renamed: {} }));
    if (!options.clean) return { tables, conflicts: [] };
    const builds = await correctProject(session, prepared, { keepRaw: false, onProgress: options.onProgress });
    const clean = await profileBuiltTables(session, builds, options.onProgress);
    for (const [i, c] of clean.entries()) Object.assign(tables[i], c);
    return { tables, conflicts: builds.flatMap((b) => b.conflicts) };
  } finally {
    session.close();
  }
}

/**
 * Profile each loaded delivery (the raw side), typed as the build types it: the codebook's declared
 * types where every value fits, else what every value fits. `keepText`: the deliveries are built
 * afterwards and must stay as delivered, so a key that takes a type is cast in a copy.
 */
export async function profileLoadedTables(
  session: Session,
  prepared: PreparedProject,
  options: { keepText: boolean; onProgress?: (event: ProfileProgress) => void },
): Promise<Map<string, TableProfile>> {
  const raw = new Map<string, TableProfile>();
  for (const { table, codebook } of prepared.tables) {
    options.onProgress?.({ phase: 'profile', table: table.name, side: 'raw' });
    const delivered = rawName(table, prepared.prefix);
    // The key was checked on loading.
    const { typings, text } = await decideFromGroups(session, delivered, table.key, declaredTypes(codebook));
    // Only key columns are cast in the table (rows are named and ordered by them); the profile casts
    // the other columns' distinct values.
    const keyTypings = typings.filter((t) => table.key.includes(t.column) && t.type !== 'string');
    const copied = options.keepText && keyTypings.length > 0;
    const typed = copied ? `${prepared.prefix}profiled_raw_${table.name}` : delivered;
    if (copied) await session.run(`CREATE OR REPLACE TABLE ${ident(typed)} AS SELECT * FROM ${ident(delivered)}`);
    await applyColumnTypes(session, typed, keyTypings);
    raw.set(table.name, await profileTable(session, typed, { name: table.name, source: 'raw', key: table.key, codebook, text }));
    if (copied) await session.run(`DROP TABLE ${ident(typed)}`);
    await dropGroupedColumns(session, text.grouped);
  }
  return raw;
}

/** Profile each built table (the clean side), with the raw column each renamed or converted column came from. */
export async function profileBuiltTables(
  session: Session,
  builds: readonly TableBuild[],
  onProgress?: (event: ProfileProgress) => void,
): Promise<Array<Pick<ProjectTableProfile, 'clean' | 'renamed'>>> {
  const result: Array<Pick<ProjectTableProfile, 'clean' | 'renamed'>> = [];
  for (const build of builds) {
    onProgress?.({ phase: 'profile', table: build.config.name, side: 'clean' });
    const clean = await profileTable(session, build.cleanTable, { name: build.config.name, source: 'clean', key: build.config.key, codebook: build.codebook });
    result.push({ clean, renamed: await renamedColumns(session, build.lineageTable) });
  }
  return result;
}

/**
 * Follow the lineage's column events in the order they applied, back from each final name to the raw
 * column it came from: renames, and typed copies (`convert … as`) of a raw column.
 */
async function renamedColumns(session: Session, lineage: string): Promise<Record<string, string>> {
  const events = await session.all<{ change: string; column: string; old: string | null; new: string }>(
    `SELECT "change", "column", "old", "new"
     FROM ${ident(lineage)}
     WHERE "change" = 'column-renamed' OR ("change" = 'column-added' AND "old" IS NOT NULL)
     ORDER BY "entry"`,
  );
  const origin = new Map<string, string>();
  for (const e of events) {
    if (e.change === 'column-renamed') {
      origin.set(e.new, origin.get(e.old!) ?? e.old!);
      origin.delete(e.old!);
    } else {
      origin.set(e.column, origin.get(e.old!) ?? e.old!);
    }
  }
  return Object.fromEntries([...origin].filter(([now, was]) => now !== was));
}
