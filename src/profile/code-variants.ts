import { ident } from '../engine/sql.js';
import { LISTED_VALUES, plural, type ColumnContext } from './column-context.js';
import type { Flag } from './types.js';

/** SQL folding a text to the form its variants share: lower case, runs of white space as one space, trimmed. */
export function foldedSql(valueSql: string): string {
  return `lower(trim(regexp_replace(${valueSql}, '\\s+', ' ', 'g')))`;
}

/**
 * Columns with more distinct values than this hold identifiers or free text rather than codes; their
 * spellings are not compared (which would also cost a pass over every distinct value).
 */
export const VARIANTS_MAX_DISTINCT = 1000;

/**
 * Spellings of one code that differ only in case or white space ("Yes", "yes ", "YES"): one flag per
 * group of two or more distinct texts that fold to the same text, the groups with most rows first.
 */
export async function codeVariantFlags(ctx: ColumnContext, distinct: number): Promise<Flag[]> {
  if (ctx.sqlType !== 'VARCHAR' || distinct > VARIANTS_MAX_DISTINCT) return [];
  const rows = await ctx.session.all<{ folded: string; value: string; count: bigint }>(
    `WITH spellings AS (
       SELECT value, ${foldedSql('value')} AS folded, count
       FROM (SELECT ${ctx.v} AS value, ${ctx.count} AS count FROM ${ident(ctx.counts)} WHERE ${ctx.v} IS NOT NULL)),
     groups AS (
       SELECT folded, sum(count) AS rows
       FROM spellings
       GROUP BY folded
       HAVING count(*) > 1
       ORDER BY rows DESC, folded
       LIMIT ${LISTED_VALUES})
     SELECT s.folded, s.value, s.count
     FROM spellings AS s JOIN groups AS g ON s.folded = g.folded
     ORDER BY g.rows DESC, s.folded, s.count DESC, s.value`,
  );
  const groups = new Map<string, Array<{ value: string; count: number }>>();
  for (const row of rows) {
    const group = groups.get(row.folded) ?? [];
    group.push({ value: row.value, count: Number(row.count) });
    groups.set(row.folded, group);
  }
  return [...groups.values()].map((spellings) => {
    const total = spellings.reduce((sum, s) => sum + s.count, 0);
    const listed = spellings.map((s) => `${JSON.stringify(s.value)} ×${s.count}`).join(', ');
    return {
      kind: 'code-variants' as const,
      message: `${spellings.length} spellings of one code differ only in case or white space (${plural(total, 'row')}): ${listed}`,
      spellings,
    };
  });
}
