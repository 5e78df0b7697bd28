import type { RawCache } from '../build/load-raw.js';
import { checkProject, type CheckedTable, type CheckProgress } from '../check/check-project.js';
import type { Conflict } from '../corrections/apply-corrections.js';
import type { Session } from '../engine/session.js';
import type { ProjectTree } from '../git/tree.js';
import { loadNotes } from '../project/notes.js';
import { cellValues, columnsByName } from './cell-values.js';
import { queryId, type Query } from './query-sheet.js';

export interface ExportQueriesOptions {
  tree: ProjectTree;
  table?: string;
  /** Ask about the raw deliveries as received instead of the clean build. */
  raw?: boolean;
  workDir: string;
  cache?: RawCache;
  onProgress?: (event: CheckProgress) => void;
}

export interface QueryExport {
  queries: Query[];
  /** Discrepancies whose query already has an approval note (notes/<query id>.md): answered before. */
  answered: number;
  /** Discrepancies about a whole column or table rather than a cell: for the data manager, not a query. */
  notCells: number;
  tables: string[];
  conflicts: Conflict[];
}

/**
 * The open discrepancies of a project as queries, one per cell. A cross-variable rule that reads
 * several columns gives one query per column, so the answerer says which of the values is wrong.
 * Each query's value is the cell's text now, which `importAnswers` compares against before it uses an
 * answer, so that an answer is never applied to a value it was not given for.
 *
 * @example
 *   const { queries } = await exportQueries({ tree: new WorkingTree(root), workDir });
 */
export async function exportQueries(options: ExportQueriesOptions): Promise<QueryExport> {
  const notes = await loadNotes(options.tree);
  const result: QueryExport = { queries: [], answered: 0, notCells: 0, tables: [], conflicts: [] };
  const check = await checkProject({
    tree: options.tree,
    table: options.table,
    raw: options.raw,
    workDir: options.workDir,
    cache: options.cache,
    onProgress: options.onProgress,
    whileOpen: async (session, tables) => {
      for (const table of tables) result.queries.push(...(await tableQueries(session, table, notes, result)));
    },
  });
  result.tables = check.tables.map((t) => t.table);
  result.conflicts = check.conflicts;
  return result;
}

async function tableQueries(session: Session, table: CheckedTable, notes: ReadonlyMap<string, unknown>, counts: QueryExport): Promise<Query[]> {
  const columns = await columnsByName(session, table.relation);
  const drafts: Array<Omit<Query, 'value'>> = [];
  const seen = new Set<string>();
  for (const d of table.check.discrepancies) {
    if (d.key === null || d.column === null) {
      counts.notCells++;
      continue;
    }
    const named = columns.has(d.column) ? [d.column] : d.column.split(', ').filter((c) => columns.has(c));
    if (named.length === 0) {
      counts.notCells++;
      continue;
    }
    for (const column of named) {
      const id = queryId(table.check.table, d.key, column, d.rule);
      if (seen.has(id)) continue;
      seen.add(id);
      if (notes.has(id)) {
        counts.answered++;
        continue;
      }
      drafts.push({ id, table: table.check.table, key: d.key, column, rule: d.rule, severity: d.severity, message: d.message });
    }
  }
  const values = new Map<string, Map<string, string | null>>();
  for (const column of new Set(drafts.map((q) => q.column))) {
    const keys = drafts.filter((q) => q.column === column).map((q) => q.key);
    values.set(column, await cellValues(session, table.relation, table.config.key, columns.get(column)!, keys));
  }
  return drafts.map((q) => ({ ...q, value: values.get(q.column)?.get(q.key) ?? null }));
}
