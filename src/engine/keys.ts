import { ErrataError } from '../errors.js';
import type { Session } from './session.js';
import { ident } from './sql.js';

/**
 * SQL for a row's key as one text value: the value itself for a single key column, a JSON array of the
 * values for a composite key. Lineage, `why` and the diff all address rows this way.
 */
export function keyExpression(key: readonly string[], alias?: string): string {
  const col = (name: string) => (alias ? `${alias}.${ident(name)}` : ident(name));
  if (key.length === 1) return `CAST(${col(key[0])} AS VARCHAR)`;
  return `CAST(to_json([${key.map((k) => `CAST(${col(k)} AS VARCHAR)`).join(', ')}]) AS VARCHAR)`;
}

/** The key text a user types (`1042`, or `A,7` for a composite key) in the form keyExpression yields. */
export function keyText(values: readonly string[]): string {
  return values.length === 1 ? values[0] : JSON.stringify(values);
}

/**
 * Every row must have a key, and no two rows the same key. Errors name the file and show a few
 * examples so the user can find them; `lineOf` gives a data row's line in the file (by default the row
 * plus the header, which is wrong once a quoted value spans lines or a line is blank).
 */
export async function assertKeyValid(
  session: Session,
  table: string,
  key: readonly string[],
  columns: readonly string[],
  file: string,
  lineOf: (row: number) => Promise<number> = async (row) => row + 1,
): Promise<void> {
  for (const k of key) {
    if (!columns.includes(k)) {
      throw new ErrataError('KEY_COLUMN_MISSING', `the key column "${k}" is not in the file`, {
        hint: `The file's columns are: ${columns.slice(0, 12).join(', ')}${columns.length > 12 ? ', ...' : ''}. Name one of them as the key (\`key:\` in errata.yaml, or --key for a file outside a project), or deliver a file with that column.`,
        data: { file, line: 1, column: k },
      });
    }
  }
  const missingCondition = key.map((k) => `${ident(k)} IS NULL OR trim(CAST(${ident(k)} AS VARCHAR)) = ''`).join(' OR ');
  const keyExpr = keyExpression(key);
  // One cheap pass answers "is anything wrong?"; row numbers are worked out only when something is.
  const health = await session.one<{ missing: bigint; repeated: bigint }>(`
    SELECT count(*) FILTER (WHERE ${missingCondition}) AS missing, count(*) - count(DISTINCT ${keyExpr}) AS repeated
    FROM ${ident(table)}`);
  if (Number(health.missing) === 0 && Number(health.repeated) === 0) return;
  const missing = await session.all<{ row: bigint }>(`
    SELECT row FROM (SELECT row_number() OVER () AS row, * FROM ${ident(table)})
    WHERE ${missingCondition} ORDER BY row LIMIT 5`);
  if (missing.length) {
    const rows = missing.map((m) => String(m.row)).join(', ');
    throw new ErrataError('KEY_MISSING', `${missing.length === 5 ? 'at least 5 rows have' : `${missing.length} row${missing.length > 1 ? 's have' : ' has'}`} no value in the key (${key.join(', ')}): data row ${rows}`, {
      hint: 'Every row needs a key value. Ask the data provider for the missing keys and deliver a corrected file.',
      data: { file, line: await lineOf(Number(missing[0].row)), column: key.join(','), rows: missing.map((m) => Number(m.row)) },
    });
  }
  const duplicates = await session.all<{ key: string; count: bigint; rows: bigint[] }>(`
    SELECT ${keyExpr} AS key, count(*) AS count, list(row ORDER BY row)[1:3] AS rows
    FROM (SELECT row_number() OVER () AS row, * FROM ${ident(table)})
    GROUP BY ALL HAVING count(*) > 1
    ORDER BY min(row) LIMIT 5`);
  if (duplicates.length) {
    const examples = duplicates.map((d) => `${d.key} (${d.count} rows: data rows ${d.rows.map(String).join(', ')})`).join('; ');
    throw new ErrataError('KEY_DUPLICATE', `the key (${key.join(', ')}) is not unique: ${examples}`, {
      hint: 'Each key must identify one row. Ask the data provider which row is right, or choose a key of several columns in errata.yaml.',
      data: { file, line: await lineOf(Number(duplicates[0].rows[1])), column: key.join(','), examples: duplicates.map((d) => d.key) },
    });
  }
}
