import path from 'node:path';
import { ErrataError } from '../errors.js';
import { applyColumnTypes, decideColumnTypes, type ColumnTyping } from '../engine/column-types.js';
import { columnsOf, type ColumnInfo } from '../engine/load-table.js';
import { Session } from '../engine/session.js';
import { ident } from '../engine/sql.js';
import type { ProjectTree } from '../git/tree.js';
import { declaredTypes, loadCodebook, type Codebook } from '../project/codebook.js';
import { loadConfig, selectTables, type ProjectConfig, type TableConfig } from '../project/config.js';
import { applyCorrections, createLineageTable, type Conflict } from '../corrections/apply-corrections.js';
import { loadCorrections } from '../corrections/load-corrections.js';
import type { Correction } from '../corrections/types.js';
import { fillRawBlobs, listRawTable, loadRawTable, planRawTable, type RawCache, type RawInput } from './load-raw.js';

export type BuildProgress =
  | { phase: 'load'; table: string }
  | { phase: 'correct'; table: string; correction: string; index: number; total: number }
  | { phase: 'write'; table: string };

export interface BuildOptions {
  tree: ProjectTree;
  /** Build one table; all when absent. */
  table?: string;
  /** Where DuckDB may spill and stage outputs; the only folder SQL can touch once inputs are loaded. */
  workDir: string;
  memoryLimit?: string;
  /** Parsed deliveries cached by git blob id (see load-raw.ts); absent: no cache. */
  cache?: RawCache;
  /** Keep the raw tables in the session (for why); default true. */
  keepRaw?: boolean;
  onProgress?: (event: BuildProgress) => void;
}

/** One table's build, still held in the session: raw (as text), clean and lineage tables. */
export interface TableBuild {
  config: TableConfig;
  codebook: Codebook | null;
  inputs: RawInput[];
  corrections: Correction[];
  /** Blob ids of the correction files and codebook, for the manifest. */
  sources: RawInput[];
  conflicts: Conflict[];
  /** Columns whose values still do not fit their (declared or evident) type after corrections. */
  typeProblems: ColumnTyping[];
  columns: ColumnInfo[];
  rows: number;
  /** The raw delivery as loaded, or null when the build did not keep it. */
  rawTable: string | null;
  cleanTable: string;
  lineageTable: string;
}

export interface ProjectBuild {
  session: Session;
  config: ProjectConfig;
  tables: TableBuild[];
  conflicts: Conflict[];
}

/** A project whose inputs are loaded into a session (raw tables named with `prefix`) but not yet corrected. */
export interface PreparedProject extends ProjectPlan {
  prefix: string;
}

/**
 * raw + corrections → clean, for each table, in one DuckDB session: load every delivery as text,
 * decide types over whole columns, lock the engine down, then apply the corrections with lineage.
 * Nothing is written here; see `stageOutputs`. The caller closes `session`.
 */
export async function buildProject(options: BuildOptions): Promise<ProjectBuild> {
  // Starting the engine (0.1 s, most of it loading DuckDB) and reading the project files wait on
  // different things, so both go at once. Without a parse cache the deliveries' blob ids only go into
  // the manifest: they are worked out while the engine reads the files (hashing 100 MB takes 0.2-0.3 s
  // on this thread).
  const hashLater = !options.cache;
  const [opened, planned] = await Promise.allSettled([
    Session.open({ spillDir: path.join(options.workDir, 'spill'), memoryLimit: options.memoryLimit }),
    planProject(options.tree, { table: options.table, rawBlobs: !hashLater }),
  ]);
  if (opened.status === 'rejected') throw opened.reason;
  const session = opened.value;
  try {
    if (planned.status === 'rejected') throw planned.reason;
    const hashed = hashLater ? fillRawBlobs(options.tree, planned.value.tables.flatMap((t) => t.inputs)) : Promise.resolve();
    const [loaded, hashing] = await Promise.allSettled([loadPlannedProject(session, options.tree, planned.value, options), hashed]);
    if (loaded.status === 'rejected') throw loaded.reason;
    if (hashing.status === 'rejected') throw hashing.reason;
    const prepared = loaded.value;
    await session.lockDown([options.workDir]);
    const tables = await correctProject(session, prepared, options);
    return { session, config: prepared.config, tables, conflicts: tables.flatMap((b) => b.conflicts) };
  } catch (error) {
    session.close();
    throw error;
  }
}

/**
 * What a project at `tree` is made of, read without loading any data: its configuration, and for each
 * table its codebook, corrections, and the raw files (with blob ids) its delivery is loaded from.
 * Everything a build depends on is named here, so a cached answer can be looked up before the load.
 */
export interface ProjectPlan {
  config: ProjectConfig;
  tables: Array<{ table: TableConfig; codebook: Codebook | null; corrections: Correction[]; inputs: RawInput[]; sources: RawInput[] }>;
}

export async function planProject(tree: ProjectTree, options: { table?: string; rawBlobs?: boolean } = {}): Promise<ProjectPlan> {
  const config = await loadConfig(tree);
  const selected = selectTables(config, options.table);
  if (selected.length === 0) {
    throw new ErrataError('PROJECT_INVALID', 'errata.yaml declares no tables yet', {
      hint: 'Add a table under `tables:` with its raw path and key (the comment at the top of errata.yaml shows how).',
      data: { file: 'errata.yaml' },
    });
  }
  const tables: ProjectPlan['tables'] = [];
  for (const table of selected) {
    const codebook = await loadCodebook(tree, table.codebook);
    const corrections = await loadCorrections(tree, table.corrections);
    // Without `rawBlobs` the raw inputs' blob ids are left empty, for fillRawBlobs (load-raw.ts).
    const inputs = await (options.rawBlobs === false ? listRawTable : planRawTable)(tree, table);
    const sources: RawInput[] = [];
    if (codebook) sources.push({ path: table.codebook, blob: await tree.blobId(table.codebook) });
    for (const c of corrections) sources.push({ path: c.file, blob: await tree.blobId(c.file) });
    tables.push({ table, codebook, corrections, inputs, sources });
  }
  return { config, tables };
}

/**
 * Load phase: read the project files of `tree` and load its raw deliveries into `session` under
 * table names starting with `prefix`, so two revisions can sit side by side in one session.
 */
export async function prepareProject(
  session: Session,
  tree: ProjectTree,
  options: { table?: string; prefix?: string; cache?: RawCache; onProgress?: (event: BuildProgress) => void } = {},
): Promise<PreparedProject> {
  return loadPlannedProject(session, tree, await planProject(tree, options), options);
}

/** The load phase of a plan made by `planProject`. */
export async function loadPlannedProject(
  session: Session,
  tree: ProjectTree,
  plan: ProjectPlan,
  options: { prefix?: string; cache?: RawCache; onProgress?: (event: BuildProgress) => void } = {},
): Promise<PreparedProject> {
  const prefix = options.prefix ?? '';
  for (const planned of plan.tables) {
    options.onProgress?.({ phase: 'load', table: planned.table.name });
    await loadRawTable(session, tree, planned.table, rawName(planned.table, prefix), options.cache, planned.inputs);
  }
  return { ...plan, prefix };
}

/** Correct phase: types, corrections with lineage, final types. Runs after the session is locked down. */
export async function correctProject(
  session: Session,
  prepared: PreparedProject,
  options: { onProgress?: (event: BuildProgress) => void; keepRaw?: boolean } = {},
): Promise<TableBuild[]> {
  const builds: TableBuild[] = [];
  const { prefix } = prepared;
  for (const { table, codebook, inputs, corrections, sources } of prepared.tables) {
    const declared = declaredTypes(codebook);
    const clean = cleanName(table, prefix);
    const lineage = lineageName(table, prefix);
    // The raw table is kept only when asked (why shows raw values); otherwise it becomes the clean one.
    const keepRaw = options.keepRaw ?? true;
    if (keepRaw) await session.run(`CREATE OR REPLACE TABLE ${ident(clean)} AS SELECT * FROM ${ident(rawName(table, prefix))}`);
    else await session.run(`ALTER TABLE ${ident(rawName(table, prefix))} RENAME TO ${ident(clean)}`);
    // Loading checked the key (load-raw.ts).
    const loadedTypes = await decideColumnTypes(session, clean, table.key, declared, { keyChecked: true });
    await applyColumnTypes(session, clean, loadedTypes);
    await createLineageTable(session, lineage);
    const conflicts = await applyCorrections(session, corrections, {
      table: clean,
      key: table.key,
      lineage,
      onStep: (e) => options.onProgress?.({ phase: 'correct', table: table.name, correction: e.correction, index: e.index, total: e.total }),
    });
    // Corrections may have made a text column fit its type (e.g. after sentinels became missing);
    // only the columns they touched can have changed, so only those are looked at again.
    const touched = await touchedColumns(session, lineage);
    const retyped = await decideColumnTypes(session, clean, table.key, declared, { only: touched });
    await applyColumnTypes(session, clean, retyped);
    const present = new Set((await columnsOf(session, clean)).map((c) => c.name));
    const finalTypes = [...loadedTypes.filter((t) => !touched.has(t.column) && present.has(t.column)), ...retyped];
    const rows = await session.one<{ n: bigint }>(`SELECT count(*) AS n FROM ${ident(clean)}`);
    builds.push({
      config: table,
      codebook,
      inputs,
      corrections,
      sources,
      conflicts,
      typeProblems: finalTypes.filter((t) => t.misfits > 0),
      columns: await columnsOf(session, clean),
      rows: Number(rows.n),
      rawTable: keepRaw ? rawName(table, prefix) : null,
      cleanTable: clean,
      lineageTable: lineage,
    });
  }
  return builds;
}

/** Columns a build's corrections changed or created, by their current names. */
async function touchedColumns(session: Session, lineage: string): Promise<Set<string>> {
  const rows = await session.all<{ name: string }>(`
    SELECT DISTINCT CASE WHEN "change" = 'column-renamed' THEN "new" ELSE "column" END AS name
    FROM ${ident(lineage)} WHERE "column" IS NOT NULL`);
  return new Set(rows.map((r) => r.name));
}


export const rawName = (table: TableConfig, prefix = '') => `${prefix}raw_${table.name}`;
export const cleanName = (table: TableConfig, prefix = '') => `${prefix}clean_${table.name}`;
export const lineageName = (table: TableConfig, prefix = '') => `${prefix}lineage_${table.name}`;
