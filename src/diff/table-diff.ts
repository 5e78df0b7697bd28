import { SQL_TYPE, valueTypeOf, type ValueType } from '../engine/column-types.js';
import { keyExpression } from '../engine/keys.js';
import { columnsOf, type ColumnInfo } from '../engine/load-table.js';
import type { Session } from '../engine/session.js';
import { ident, literal } from '../engine/sql.js';
import { textSql } from '../engine/value-text.js';
import type { CellChange, ColumnRetype, DiffSummary, TableDiff } from './types.js';

export interface DiffOptions {
  key: readonly string[];
  /** Numbers closer than this count as equal. */
  tolerance?: number;
  /** Keep at most this many changed cells (all are counted). Default: all. */
  cellLimit?: number;
  /** Name shown in renderings. */
  table?: string;
  /** Lineage table of the new side, to attribute each changed cell to the correction that made it. */
  lineage?: string;
  /**
   * Types to compare by, for tables kept as delivered text (file diffs): values are compared as these
   * types but shown as their original text. Columns not named compare by their SQL type.
   */
  compareTypes?: { old: ReadonlyMap<string, ValueType>; new: ReadonlyMap<string, ValueType> };
  /**
   * Also keep every changed cell in a session table of this name ("key", "column", "old", "new"), for
   * callers that go on in SQL (the review) rather than in JavaScript.
   */
  cellTable?: string;
}

/** A column with the type its values are compared as. */
interface Compared extends ColumnInfo {
  as: ValueType;
}

const NUMERIC = new Set(['integer', 'number']);

/**
 * Keyed cell-level diff of two tables in one session, as SQL: a full outer join on the key, and for
 * every common column a null-safe comparison (numbers within `tolerance` count as equal). Only rows
 * that differ are materialised, so memory follows the size of the change, not of the tables.
 */
export async function diffTables(session: Session, oldTable: string, newTable: string, options: DiffOptions): Promise<TableDiff> {
  const key = [...options.key];
  const withTypes = (columns: ColumnInfo[], types?: ReadonlyMap<string, ValueType>): Compared[] =>
    columns.map((c) => ({ ...c, as: types?.get(c.name) ?? valueTypeOf(c.type) }));
  const oldColumns = withTypes(await columnsOf(session, oldTable), options.compareTypes?.old);
  const newColumns = withTypes(await columnsOf(session, newTable), options.compareTypes?.new);
  const oldByName = new Map(oldColumns.map((c) => [c.name, c]));
  const newByName = new Map(newColumns.map((c) => [c.name, c]));
  const common = newColumns.filter((c) => oldByName.has(c.name) && !key.includes(c.name));
  const added = newColumns.filter((c) => !oldByName.has(c.name)).map((c) => c.name);
  const removed = oldColumns.filter((c) => !newByName.has(c.name)).map((c) => c.name);
  const retyped: ColumnRetype[] = common
    .filter((c) => c.as !== oldByName.get(c.name)!.as)
    .map((c) => ({ column: c.name, from: oldByName.get(c.name)!.as, to: c.as }));

  const joinOn = key.map((k) => sameKey(k, oldByName.get(k)!, newByName.get(k)!)).join(' AND ');
  const flags = common.map((c, i) => `${differs(c, oldByName.get(c.name)!, options.tolerance)} AS "d${i}"`);
  const anyFlag = common.length ? common.map((_, i) => `"d${i}"`).join(' OR ') : 'false';
  const rowKey = `CASE WHEN n.${ident(key[0])} IS NULL THEN ${keyExpression(key, 'o')} ELSE ${keyExpression(key, 'n')} END`;
  const order = key.map((k) => `COALESCE(n.${ident(k)}, o.${ident(k)})`);
  const work = `__diff_${Math.random().toString(36).slice(2, 10)}`;
  await session.run(`CREATE TEMP TABLE ${ident(work)} AS
    SELECT * FROM (
      SELECT ${rowKey} AS "key",
             ${order.map((o, i) => `${o} AS "k${i}"`).join(', ')},
             o.${ident(key[0])} IS NULL AS "added",
             n.${ident(key[0])} IS NULL AS "removed",
             ${[...flags, ...common.flatMap((c, i) => [`${textSql(`o.${ident(c.name)}`, oldByName.get(c.name)!.type)} AS "o${i}"`, `${textSql(`n.${ident(c.name)}`, c.type)} AS "n${i}"`])].join(',\n             ')}
      FROM ${ident(oldTable)} AS o FULL OUTER JOIN ${ident(newTable)} AS n ON ${joinOn}
    ) WHERE "added" OR "removed" OR ${anyFlag}`);
  try {
    const counts = await session.one<Record<string, bigint>>(`
      SELECT count(*) FILTER (WHERE "added") AS added,
             count(*) FILTER (WHERE "removed") AS removed,
             count(*) FILTER (WHERE NOT "added" AND NOT "removed") AS changed,
             ${common.length ? common.map((_, i) => `count(*) FILTER (WHERE NOT "added" AND NOT "removed" AND "d${i}")`).join(' + ') : '0'} AS cells
      FROM ${ident(work)}`);
    const newRows = await session.one<{ n: bigint }>(`SELECT count(*) AS n FROM ${ident(newTable)}`);
    const summary: DiffSummary = {
      rows: {
        added: Number(counts.added),
        removed: Number(counts.removed),
        changed: Number(counts.changed),
        unchanged: Number(newRows.n) - Number(counts.added) - Number(counts.changed),
      },
      cells: { changed: Number(counts.cells) },
      columns: { added, removed, retyped: retyped.map((r) => r.column) },
    };
    const keyOrder = key.map((_, i) => `"k${i}"`).join(', ');
    const keysWhere = async (flag: string) =>
      (await session.all<{ key: string }>(`SELECT "key" FROM ${ident(work)} WHERE ${flag} ORDER BY ${keyOrder}`)).map((r) => r.key);
    const cells = common.length ? await changedCells(session, work, common, keyOrder, options) : [];
    return {
      table: options.table ?? newTable,
      key,
      summary,
      retyped,
      renamed: await likelyRenames(session, oldTable, newTable, key, removed, added),
      addedKeys: await keysWhere('"added"'),
      removedKeys: await keysWhere('"removed"'),
      cells,
      complete: cells.length === summary.cells.changed,
    };
  } finally {
    await session.run(`DROP TABLE IF EXISTS ${ident(work)}`);
  }
}

/** Key columns match across sides; compared as text when their types differ (e.g. 42 and "42"). */
function sameKey(k: string, oldColumn: ColumnInfo, newColumn: ColumnInfo): string {
  if (oldColumn.type === newColumn.type) return `o.${ident(k)} = n.${ident(k)}`;
  return `CAST(o.${ident(k)} AS VARCHAR) = CAST(n.${ident(k)} AS VARCHAR)`;
}

/** SQL that is true when a cell changed: null-safe, typed, numbers within tolerance equal. */
function differs(newColumn: Compared, oldColumn: Compared, tolerance?: number): string {
  const o = comparable(`o.${ident(oldColumn.name)}`, oldColumn, newColumn.as);
  const n = comparable(`n.${ident(newColumn.name)}`, newColumn, oldColumn.as);
  const bothNumeric = NUMERIC.has(oldColumn.as) && NUMERIC.has(newColumn.as);
  const typed =
    bothNumeric && tolerance !== undefined && tolerance > 0
      ? `((${o}) IS NULL) <> ((${n}) IS NULL) OR abs((${o}) - (${n})) > ${Number(tolerance)}`
      : `(${o}) IS DISTINCT FROM (${n})`;
  // Equal stored values are equal under any comparison, so the typed one runs only where they differ.
  if (oldColumn.type !== newColumn.type) return typed;
  return `(CASE WHEN o.${ident(oldColumn.name)} IS NOT DISTINCT FROM n.${ident(newColumn.name)} THEN false ELSE (${typed}) END)`;
}

/**
 * A column's value in the form both sides are compared in: both integer → BIGINT, both numeric →
 * DOUBLE, both the same other type → that type; types that disagree → the text.
 */
function comparable(value: string, column: Compared, otherAs: ValueType): string {
  const as = column.as === otherAs || (NUMERIC.has(column.as) && NUMERIC.has(otherAs)) ? column.as : 'string';
  const target = as === 'integer' && otherAs === 'integer' ? 'BIGINT' : NUMERIC.has(as) ? 'DOUBLE' : as === 'string' ? 'VARCHAR' : SQL_TYPE[as];
  if (column.type === target) return value;
  if (column.type === 'VARCHAR' && as === 'boolean') return `(lower(${value}) = 'true')`;
  return column.type === 'VARCHAR' ? `TRY_CAST(${value} AS ${target})` : `CAST(${value} AS ${target})`;
}

async function changedCells(session: Session, work: string, common: ColumnInfo[], keyOrder: string, options: DiffOptions): Promise<CellChange[]> {
  const perColumn = common.map(
    (c, i) => `SELECT "key", ${keyOrder}, ${i} AS "ci", ${literal(c.name)} AS "column", "o${i}" AS "old", "n${i}" AS "new"
               FROM ${ident(work)} WHERE NOT "added" AND NOT "removed" AND "d${i}"`,
  );
  const limit = options.cellLimit !== undefined ? `LIMIT ${Math.max(0, Math.floor(options.cellLimit))}` : '';
  const cells = `(${perColumn.join(' UNION ALL ')})`;
  if (options.cellTable) {
    await session.run(`CREATE OR REPLACE TEMP TABLE ${ident(options.cellTable)} AS SELECT "key", "column", "old", "new" FROM ${cells}`);
  }
  // A cell's producer is the last correction that set it; failing that, the one that made its column
  // (a derived or converted column's values come from the step that created it).
  const attribution = options.lineage
    ? `LEFT JOIN (SELECT "key", "column", arg_max("correction", ("correction", "step")) AS "correction"
                  FROM ${ident(options.lineage)} WHERE "change" = 'cell' GROUP BY ALL) AS l
         ON l."key" = c."key" AND l."column" = c."column"
       LEFT JOIN (SELECT "column", arg_max("correction", ("correction", "step")) AS "correction"
                  FROM ${ident(options.lineage)} WHERE "change" IN ('column-added', 'column-retyped') GROUP BY ALL) AS lc
         ON lc."column" = c."column"`
    : '';
  const rows = await session.all<{ key: string; column: string; old: string | null; new: string | null; correction?: string | null }>(
    `SELECT c."key", c."column", c."old", c."new"${options.lineage ? ', COALESCE(l."correction", lc."correction") AS "correction"' : ''}
     FROM ${cells} AS c ${attribution}
     ORDER BY ${keyOrder.split(', ').map((k) => `c.${k}`).join(', ')}, c."ci" ${limit}`,
  );
  return rows.map((r) => (options.lineage ? { ...r, correction: r.correction ?? null } : { key: r.key, column: r.column, old: r.old, new: r.new }));
}

/** A removed and an added column with identical values in every common row: most likely a rename. */
async function likelyRenames(session: Session, oldTable: string, newTable: string, key: string[], removed: string[], added: string[]) {
  const renames: Array<{ from: string; to: string }> = [];
  const taken = new Set<string>();
  if (removed.length === 0 || added.length === 0 || removed.length * added.length > 400) return renames;
  const joinOn = key.map((k) => `CAST(o.${ident(k)} AS VARCHAR) = CAST(n.${ident(k)} AS VARCHAR)`).join(' AND ');
  for (const from of removed) {
    for (const to of added) {
      if (taken.has(to)) continue;
      const row = await session.one<{ rows: bigint; different: bigint; present: bigint }>(
        `SELECT count(*) AS rows,
                count(*) FILTER (WHERE CAST(o.${ident(from)} AS VARCHAR) IS DISTINCT FROM CAST(n.${ident(to)} AS VARCHAR)) AS different,
                count(o.${ident(from)}) AS present
         FROM ${ident(oldTable)} AS o JOIN ${ident(newTable)} AS n ON ${joinOn}`,
      );
      if (Number(row.rows) > 0 && Number(row.different) === 0 && Number(row.present) > 0) {
        renames.push({ from, to });
        taken.add(to);
        break;
      }
    }
  }
  return renames;
}

