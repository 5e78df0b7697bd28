import path from 'node:path';
import { ErrataError } from '../errors.js';
import { buildProject, prepareProject, rawName, type BuildProgress } from '../build/build-project.js';
import type { RawCache } from '../build/load-raw.js';
import type { Conflict } from '../corrections/apply-corrections.js';
import { Session } from '../engine/session.js';
import type { ProjectTree } from '../git/tree.js';
import type { Codebook } from '../project/codebook.js';
import type { TableConfig } from '../project/config.js';
import { checkTable } from './check-table.js';
import type { TableCheck } from './types.js';

export type CheckProgress = BuildProgress | { phase: 'check'; table: string };

export interface CheckProjectOptions {
  tree: ProjectTree;
  /** Check one table; every table with a codebook when absent. */
  table?: string;
  /** Check the raw deliveries as received instead of the clean build. */
  raw?: boolean;
  /** Where DuckDB may spill; the only folder SQL can touch once inputs are loaded. */
  workDir: string;
  cache?: RawCache;
  memoryLimit?: string;
  onProgress?: (event: CheckProgress) => void;
  /** Runs once every table is checked, with the checked tables still in the session (to look up cells). */
  whileOpen?: (session: Session, tables: CheckedTable[]) => Promise<void>;
}

/** A checked table as it sits in the session: `relation` is its table name there. */
export interface CheckedTable {
  check: TableCheck;
  config: TableConfig;
  relation: string;
}

export interface ProjectCheck {
  tables: TableCheck[];
  /** Tables left out because they have no codebook. */
  skipped: Array<{ table: string; codebook: string }>;
  /** Guarded edits the clean build had to leave out; the clean data is checked without them. */
  conflicts: Conflict[];
}

/**
 * Check a project's tables against their codebooks: the clean build by default, or with `raw` the
 * deliveries as received (no correction applied). A table without a codebook is skipped, unless it
 * was asked for by name, which is an error.
 *
 * @example
 *   const result = await checkProject({ tree: new WorkingTree(root), table: 'visits', raw: true, workDir });
 */
export async function checkProject(options: CheckProjectOptions): Promise<ProjectCheck> {
  const targets: CheckTarget[] = [];
  let session: Session;
  let conflicts: Conflict[] = [];
  if (options.raw) {
    session = await Session.open({ spillDir: path.join(options.workDir, 'spill'), memoryLimit: options.memoryLimit });
    try {
      const prepared = await prepareProject(session, options.tree, { table: options.table, cache: options.cache, onProgress: options.onProgress });
      await session.lockDown([options.workDir]);
      for (const t of prepared.tables) targets.push({ config: t.table, codebook: t.codebook, table: rawName(t.table) });
    } catch (error) {
      session.close();
      throw error;
    }
  } else {
    const build = await buildProject({
      tree: options.tree,
      table: options.table,
      workDir: options.workDir,
      memoryLimit: options.memoryLimit,
      cache: options.cache,
      keepRaw: false,
      onProgress: options.onProgress,
    });
    session = build.session;
    conflicts = build.conflicts;
    for (const t of build.tables) targets.push({ config: t.config, codebook: t.codebook, table: t.cleanTable });
  }
  try {
    const { result, checked } = await checkLoadedTables(session, targets, { ...options, source: options.raw ? 'raw' : 'clean', conflicts });
    await options.whileOpen?.(session, checked);
    return result;
  } finally {
    session.close();
  }
}

/** A table loaded (raw) or built (clean) in a session, to be checked against its codebook. */
export interface CheckTarget {
  config: TableConfig;
  codebook: Codebook | null;
  /** Its table name in the session. */
  table: string;
}

/**
 * Check tables already in a locked-down session (checkProject's second half, for callers that load or
 * build the project themselves). Tables without a codebook are skipped, or refused when `table` asked
 * for one by name; INPUT_MISSING when none has one.
 */
export async function checkLoadedTables(
  session: Session,
  targets: readonly CheckTarget[],
  options: { source: 'raw' | 'clean'; table?: string; conflicts?: Conflict[]; onProgress?: (event: CheckProgress) => void },
): Promise<{ result: ProjectCheck; checked: CheckedTable[] }> {
  const tables: TableCheck[] = [];
  const checked: CheckedTable[] = [];
  const skipped: ProjectCheck['skipped'] = [];
  for (const target of targets) {
    if (!target.codebook) {
      if (options.table) throw noCodebook(target.config);
      skipped.push({ table: target.config.name, codebook: target.config.codebook });
      continue;
    }
    options.onProgress?.({ phase: 'check', table: target.config.name });
    // Loading has already refused rows without a key and keys that repeat.
    const result = await checkTable(session, { table: target.table, key: target.config.key, codebook: target.codebook, keyChecked: true });
    const check: TableCheck = { table: target.config.name, source: options.source, keyColumns: [...target.config.key], ...result };
    tables.push(check);
    checked.push({ check, config: target.config, relation: target.table });
  }
  if (tables.length === 0) throw noneChecked(skipped);
  return { result: { tables, skipped, conflicts: options.conflicts ?? [] }, checked };
}

function noneChecked(skipped: ProjectCheck['skipped']): ErrataError {
  return new ErrataError('INPUT_MISSING', `no table has a codebook (${skipped.map((s) => s.codebook).join(', ')})`, {
    hint: `Draft one from the raw data with \`errata codebook draft ${skipped[0]?.table ?? 'TABLE'}\`, then edit it.`,
  });
}

function noCodebook(table: TableConfig): ErrataError {
  return new ErrataError('INPUT_MISSING', `table "${table.name}" has no codebook (${table.codebook})`, {
    hint: `Draft one from the raw data with \`errata codebook draft ${table.name}\`, then edit it.`,
    data: { file: table.codebook },
  });
}
