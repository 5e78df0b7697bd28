import { columnsOf } from '../engine/load-table.js';
import type { Session } from '../engine/session.js';
import { ident } from '../engine/sql.js';
import { textSql } from '../engine/value-text.js';
import type { MultisetDiff, RowCount } from './types.js';

/**
 * Without a key, rows have no identity: compare the two tables as multisets of rows over their common
 * columns. A row that occurs twice in old and once in new is "only in old" once.
 */
export async function diffRowMultisets(session: Session, oldTable: string, newTable: string, options: { table?: string; rowLimit?: number } = {}): Promise<MultisetDiff> {
  const oldInfo = await columnsOf(session, oldTable);
  const newInfo = await columnsOf(session, newTable);
  const oldColumns = oldInfo.map((c) => c.name);
  const newColumns = newInfo.map((c) => c.name);
  const compared = newColumns.filter((c) => oldColumns.includes(c));
  const cols = (info: typeof oldInfo) =>
    compared.map((c) => `${textSql(ident(c), info.find((i) => i.name === c)!.type)} AS ${ident(c)}`).join(', ');
  const counted = (table: string, info: typeof oldInfo) => `(SELECT ${cols(info)}, count(*) AS "__n" FROM ${ident(table)} GROUP BY ALL)`;
  const on = compared.map((c) => `o.${ident(c)} IS NOT DISTINCT FROM n.${ident(c)}`).join(' AND ') || 'true';
  const pick = compared.map((c) => `COALESCE(o.${ident(c)}, n.${ident(c)}) AS ${ident(c)}`).join(', ');
  const work = `__multiset_${Math.random().toString(36).slice(2, 10)}`;
  await session.run(`CREATE TEMP TABLE ${ident(work)} AS
    SELECT ${pick}, COALESCE(o."__n", 0) AS "__old", COALESCE(n."__n", 0) AS "__new"
    FROM ${counted(oldTable, oldInfo)} AS o FULL OUTER JOIN ${counted(newTable, newInfo)} AS n ON ${on}
    WHERE COALESCE(o."__n", 0) <> COALESCE(n."__n", 0)`);
  try {
    const totals = await session.one<Record<string, bigint>>(`
      SELECT (SELECT count(*) FROM ${ident(oldTable)}) AS old_rows, (SELECT count(*) FROM ${ident(newTable)}) AS new_rows,
             COALESCE(sum(greatest("__old" - "__new", 0)), 0) AS only_old, COALESCE(sum(greatest("__new" - "__old", 0)), 0) AS only_new
      FROM ${ident(work)}`);
    const limit = options.rowLimit !== undefined ? `LIMIT ${Math.max(0, Math.floor(options.rowLimit))}` : '';
    const order = compared.map(ident).join(', ') || '1';
    const fetch = async (side: 'old' | 'new'): Promise<RowCount[]> => {
      const [mine, theirs] = side === 'old' ? ['"__old"', '"__new"'] : ['"__new"', '"__old"'];
      const rows = await session.all<Record<string, unknown>>(
        `SELECT *, ${mine} - ${theirs} AS "__count" FROM ${ident(work)} WHERE ${mine} > ${theirs} ORDER BY ${order} ${limit}`,
      );
      return rows.map((r) => ({
        values: Object.fromEntries(compared.map((c) => [c, (r[c] as string | null) ?? null])),
        count: Number(r.__count),
      }));
    };
    const onlyOld = await fetch('old');
    const onlyNew = await fetch('new');
    const distinctDiffering = await session.one<{ o: bigint; n: bigint }>(
      `SELECT count(*) FILTER (WHERE "__old" > "__new") AS o, count(*) FILTER (WHERE "__new" > "__old") AS n FROM ${ident(work)}`,
    );
    const onlyOldRows = Number(totals.only_old);
    return {
      table: options.table ?? newTable,
      columns: {
        added: newColumns.filter((c) => !oldColumns.includes(c)),
        removed: oldColumns.filter((c) => !newColumns.includes(c)),
        compared,
      },
      onlyOld,
      onlyNew,
      rows: {
        old: Number(totals.old_rows),
        new: Number(totals.new_rows),
        onlyOld: onlyOldRows,
        onlyNew: Number(totals.only_new),
        common: Number(totals.old_rows) - onlyOldRows,
      },
      complete: onlyOld.length === Number(distinctDiffering.o) && onlyNew.length === Number(distinctDiffering.n),
    };
  } finally {
    await session.run(`DROP TABLE IF EXISTS ${ident(work)}`);
  }
}
