import type { Session } from '../engine/session.js';
import { keyExpression } from '../engine/keys.js';
import { columnsOf, type ColumnInfo } from '../engine/load-table.js';
import { ident } from '../engine/sql.js';
import { textSql } from '../engine/value-text.js';

const CHUNK = 500;

/**
 * The text of one column's cells for the given row keys, as errata writes values everywhere; a key
 * with no row is absent from the map, a missing value is null.
 */
export async function cellValues(
  session: Session,
  relation: string,
  key: readonly string[],
  column: ColumnInfo,
  keys: readonly string[],
): Promise<Map<string, string | null>> {
  const found = new Map<string, string | null>();
  const unique = [...new Set(keys)];
  for (let at = 0; at < unique.length; at += CHUNK) {
    const chunk = unique.slice(at, at + CHUNK);
    const wanted = chunk.map((_, i) => `($${i + 1})`).join(', ');
    const rows = await session.all<{ k: string; v: string | null }>(
      `SELECT t.k, t.v FROM (SELECT ${keyExpression(key)} AS k, ${textSql(ident(column.name), column.type)} AS v FROM ${ident(relation)}) AS t
       WHERE t.k IN (SELECT w FROM (VALUES ${wanted}) AS wanted(w))`,
      chunk,
    );
    for (const row of rows) found.set(row.k, row.v);
  }
  return found;
}

/** A table's columns by name. */
export async function columnsByName(session: Session, relation: string): Promise<Map<string, ColumnInfo>> {
  return new Map((await columnsOf(session, relation)).map((c) => [c.name, c]));
}
