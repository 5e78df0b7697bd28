import { SQL_TYPE, addTypeFits, countTypeFits, detectedType, valueCountsSql, valueTypeOf, type TypeFits, type ValueType } from '../engine/column-types.js';
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
   * Both tables hold delivered text (file diffs): values are compared as the types decided over each
   * whole column but shown as their text. `oldFits` are the old side's type counts for its text
   * columns other than the key (columnTypeFits); the new side's are worked out from them and the
   * rows that differ, since rows whose text is the same on both sides add the same counts to each.
   * Without this option, columns compare by their SQL types.
   */
  deliveredText?: { oldFits: ReadonlyMap<string, TypeFits> };
  /**
   * The tables hold only the rows that may differ, all rows identical on both sides left out (the
   * aligned scan's parts), and the whole new side has `newRows` rows. The new side's type counts are
   * then the old side's less the old table's plus the new table's, and the join is read once rather
   * than kept.
   */
  parts?: { newRows: number };
  /**
   * Also keep every changed cell in a session table of this name ("key", "column", "old", "new"), for
   * callers that go on in SQL (the review) rather than in JavaScript.
   */
  cellTable?: string;
  /**
   * List the keys of added and removed rows (default true). False leaves addedKeys and removedKeys
   * empty, for a caller that shows only the counts: two sorted reads of the work table saved.
   */
  rowKeys?: boolean;
}

/** A column with the type its values are compared as. */
interface Compared extends ColumnInfo {
  as: ValueType;
}

const NUMERIC = new Set(['integer', 'number']);

/**
 * Keyed cell-level diff of two tables in one session, as SQL: a full outer join on the key, and for
 * every common column a null-safe comparison (numbers within `tolerance` count as equal). Only rows
 * that differ are materialised, so memory follows the size of the change, not of the tables. The
 * join keeps the rows whose stored values differ; the typed comparison then runs on those alone.
 */
export async function diffTables(session: Session, oldTable: string, newTable: string, options: DiffOptions): Promise<TableDiff> {
  const key = [...options.key];
  const oldInfo = await columnsOf(session, oldTable);
  const newInfo = await columnsOf(session, newTable);
  const oldInfoByName = new Map(oldInfo.map((c) => [c.name, c]));
  const newInfoByName = new Map(newInfo.map((c) => [c.name, c]));
  const commonNames = newInfo.filter((c) => oldInfoByName.has(c.name) && !key.includes(c.name)).map((c) => c.name);
  const added = newInfo.filter((c) => !oldInfoByName.has(c.name)).map((c) => c.name);
  const removed = oldInfo.filter((c) => !newInfoByName.has(c.name)).map((c) => c.name);

  const id = Math.random().toString(36).slice(2, 10);
  const rowsWork = `__diff_${id}_rows`;
  const work = `__diff_${id}`;
  const joinOn = key.map((k) => sameKey(k, oldInfoByName.get(k)!, newInfoByName.get(k)!)).join(' AND ');
  const stored = commonNames.map((c, i) => `${storedDiffer(oldInfoByName.get(c)!, newInfoByName.get(c)!)} AS "s${i}"`);
  const anyStored = commonNames.length ? commonNames.map((_, i) => `"s${i}"`).join(' OR ') : 'false';
  const rowKey = `CASE WHEN n.${ident(key[0])} IS NULL THEN ${keyExpression(key, 'o')} ELSE ${keyExpression(key, 'n')} END`;
  const order = key.map((k) => `COALESCE(n.${ident(k)}, o.${ident(k)})`);
  // Over parts the join is read once, so it need not be kept.
  const rowsKind = options.parts ? 'VIEW' : 'TABLE';
  await session.run(`CREATE TEMP ${rowsKind} ${ident(rowsWork)} AS
    SELECT * FROM (
      SELECT ${rowKey} AS "key",
             ${order.map((o, i) => `${o} AS "k${i}"`).join(', ')},
             o.${ident(key[0])} IS NULL AS "added",
             n.${ident(key[0])} IS NULL AS "removed",
             ${[...stored, ...commonNames.flatMap((c, i) => [`o.${ident(c)} AS "ov${i}"`, `n.${ident(c)} AS "nv${i}"`])].join(',\n             ')}
      FROM ${ident(oldTable)} AS o FULL OUTER JOIN ${ident(newTable)} AS n ON ${joinOn}
    ) WHERE "added" OR "removed" OR ${anyStored}`);
  try {
    const types = options.deliveredText
      ? await deliveredTextTypes(session, { oldInfo, newInfo, key, commonNames, rowsWork, oldTable, newTable, oldFits: options.deliveredText.oldFits, parts: Boolean(options.parts) })
      : null;
    const compared = (column: ColumnInfo, side: 'old' | 'new'): Compared => ({ ...column, as: types?.[side].get(column.name) ?? valueTypeOf(column.type) });
    const common = commonNames.map((c) => ({ old: compared(oldInfoByName.get(c)!, 'old'), new: compared(newInfoByName.get(c)!, 'new') }));
    const retyped: ColumnRetype[] = common.filter((c) => c.new.as !== c.old.as).map((c) => ({ column: c.new.name, from: c.old.as, to: c.new.as }));
    // A summary (no cells asked for) needs the flags, not the values.
    const keepTexts = options.cellLimit !== 0 || options.cellTable !== undefined;
    const flags = common.map((c, i) => `${differs(`"ov${i}"`, `"nv${i}"`, c.old, c.new, options.tolerance)} AS "d${i}"`);
    const anyFlag = common.length ? common.map((_, i) => `"d${i}"`).join(' OR ') : 'false';
    await session.run(`CREATE TEMP TABLE ${ident(work)} AS
      SELECT * FROM (
        SELECT "key", ${key.map((_, i) => `"k${i}"`).join(', ')}, "added", "removed",
               ${[...flags, ...(keepTexts ? common.flatMap((c, i) => [`${textSql(`"ov${i}"`, c.old.type)} AS "o${i}"`, `${textSql(`"nv${i}"`, c.new.type)} AS "n${i}"`]) : [])].join(',\n               ')}
        FROM ${ident(rowsWork)}
      ) WHERE "added" OR "removed" OR ${anyFlag}`);
    await session.run(`DROP ${rowsKind} ${ident(rowsWork)}`);
    const counts = await session.one<Record<string, bigint>>(`
      SELECT count(*) FILTER (WHERE "added") AS added,
             count(*) FILTER (WHERE "removed") AS removed,
             count(*) FILTER (WHERE NOT "added" AND NOT "removed") AS changed,
             ${common.length ? common.map((_, i) => `count(*) FILTER (WHERE NOT "added" AND NOT "removed" AND "d${i}")`).join(' + ') : '0'} AS cells
      FROM ${ident(work)}`);
    const newRows = options.parts?.newRows ?? Number((await session.one<{ n: bigint }>(`SELECT count(*) AS n FROM ${ident(newTable)}`)).n);
    const summary: DiffSummary = {
      rows: {
        added: Number(counts.added),
        removed: Number(counts.removed),
        changed: Number(counts.changed),
        unchanged: newRows - Number(counts.added) - Number(counts.changed),
      },
      cells: { changed: Number(counts.cells) },
      columns: { added, removed, retyped: retyped.map((r) => r.column) },
    };
    const keyOrder = key.map((_, i) => `"k${i}"`).join(', ');
    const keysWhere = async (flag: string) =>
      options.rowKeys === false ? [] : (await session.all<{ key: string }>(`SELECT "key" FROM ${ident(work)} WHERE ${flag} ORDER BY ${keyOrder}`)).map((r) => r.key);
    const cells = common.length && keepTexts ? await changedCells(session, work, common.map((c) => c.new), keyOrder, options) : [];
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
    await session.run(`DROP ${rowsKind} IF EXISTS ${ident(rowsWork)}`);
    await session.run(`DROP TABLE IF EXISTS ${ident(work)}`);
  }
}

/**
 * A cheap test that is true wherever the typed comparison could be: stored values that are not the
 * same (equal values are equal under any comparison; equal texts read as equal values).
 */
function storedDiffer(oldColumn: ColumnInfo, newColumn: ColumnInfo): string {
  const [o, n] = [`o.${ident(oldColumn.name)}`, `n.${ident(newColumn.name)}`];
  if (oldColumn.type === newColumn.type) return `${o} IS DISTINCT FROM ${n}`;
  return `${textSql(o, oldColumn.type)} IS DISTINCT FROM ${textSql(n, newColumn.type)}`;
}

/**
 * The types both sides of a text diff are compared as: each text column's type detected over the
 * whole column (numbers need not print back as written: 1.0 and 1 compare equal). The new side's
 * counts are the old side's, less the old texts of the rows that differ, plus their new texts; a
 * column the old side lacks as text is counted over the new table.
 */
async function deliveredTextTypes(
  session: Session,
  work: {
    oldInfo: ColumnInfo[];
    newInfo: ColumnInfo[];
    key: readonly string[];
    commonNames: string[];
    rowsWork: string;
    oldTable: string;
    newTable: string;
    oldFits: ReadonlyMap<string, TypeFits>;
    parts: boolean;
  },
): Promise<{ old: Map<string, ValueType>; new: Map<string, ValueType> }> {
  const old = new Map<string, ValueType>();
  for (const [column, fits] of work.oldFits) old.set(column, detectedType(fits, false));
  const text = work.newInfo.filter((c) => c.type === 'VARCHAR' && !work.key.includes(c.name)).map((c) => c.name);
  const fromOld = text.filter((c) => work.oldFits.has(c) && work.commonNames.includes(c));
  const counted = text.filter((c) => !fromOld.includes(c));
  const rows = ident(work.rowsWork);
  const deltas = fromOld.map((c) => {
    // Every row of the old table is replaced by every row of the new one.
    if (work.parts) {
      return `SELECT ${ident(c)} AS v, -count(*) AS k FROM ${ident(work.oldTable)} GROUP BY ALL
              UNION ALL SELECT ${ident(c)} AS v, count(*) AS k FROM ${ident(work.newTable)} GROUP BY ALL`;
    }
    const i = work.commonNames.indexOf(c);
    // On an added or removed row the missing side is null, so s_i holds wherever the row has a value.
    return `SELECT "ov${i}" AS v, -1 AS k FROM ${rows} WHERE NOT "added" AND "s${i}"
            UNION ALL SELECT "nv${i}" AS v, 1 AS k FROM ${rows} WHERE NOT "removed" AND "s${i}"`;
  });
  const fits = await countTypeFits(session, [...deltas, ...counted.map((c) => valueCountsSql(work.newTable, c))]);
  const types = new Map<string, ValueType>();
  fromOld.forEach((c, i) => types.set(c, detectedType(addTypeFits(work.oldFits.get(c)!, fits[i]), false)));
  counted.forEach((c, i) => types.set(c, detectedType(fits[fromOld.length + i], false)));
  return { old, new: types };
}

/** Key columns match across sides; compared as text when their types differ (e.g. 42 and "42"). */
function sameKey(k: string, oldColumn: ColumnInfo, newColumn: ColumnInfo): string {
  if (oldColumn.type === newColumn.type) return `o.${ident(k)} = n.${ident(k)}`;
  return `CAST(o.${ident(k)} AS VARCHAR) = CAST(n.${ident(k)} AS VARCHAR)`;
}

/** SQL that is true when a cell changed: null-safe, typed, numbers within tolerance equal. */
function differs(oldValue: string, newValue: string, oldColumn: Compared, newColumn: Compared, tolerance?: number): string {
  const o = comparable(oldValue, oldColumn, newColumn.as);
  const n = comparable(newValue, newColumn, oldColumn.as);
  const bothNumeric = NUMERIC.has(oldColumn.as) && NUMERIC.has(newColumn.as);
  const typed =
    bothNumeric && tolerance !== undefined && tolerance > 0
      ? `((${o}) IS NULL) <> ((${n}) IS NULL) OR abs((${o}) - (${n})) > ${Number(tolerance)}`
      : `(${o}) IS DISTINCT FROM (${n})`;
  // Equal stored values are equal under any comparison, so the typed one runs only where they differ.
  if (oldColumn.type !== newColumn.type) return typed;
  return `(CASE WHEN ${oldValue} IS NOT DISTINCT FROM ${newValue} THEN false ELSE (${typed}) END)`;
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

