import { exampleKeys, placeholders, plural, shown, valuesWhere, type ColumnContext } from './column-context.js';
import type { Flag } from './types.js';

/**
 * Values outside what the codebook allows for the column, one flag per constraint broken:
 *
 * - enum: the value's text (as errata writes it) is not one of the listed codes;
 * - minimum / maximum: a number (or date) below or above the bound, for integer, number and date
 *   columns; a column that stayed text is reported as numbers stored as text instead.
 *
 * As in Frictionless Table Schema, a value listed under missingValues counts as missing, not as a
 * value, so it breaks no constraint. `errata check` lists every such cell; the profile counts them.
 */
export async function codebookFlags(ctx: ColumnContext): Promise<Flag[]> {
  const constraints = ctx.field?.constraints;
  if (!constraints) return [];
  const flags: Flag[] = [];
  const notMissing = ctx.missingCodes.length ? `${ctx.text} NOT IN (${placeholders(ctx.missingCodes.length)})` : 'true';
  const present = `${ctx.v} IS NOT NULL AND ${notMissing}`;
  if (constraints.enum?.length) {
    const allowed = constraints.enum;
    const condition = `${present} AND ${ctx.text} NOT IN (${placeholders(allowed.length, ctx.missingCodes.length + 1)})`;
    const flag = await outside(ctx, 'enum', null, condition, [...ctx.missingCodes, ...allowed], (count, listed) =>
      `${holding(count)} not among the codebook's codes (${allowed.map(shown).join(', ')}): ${listed}`,
    );
    if (flag) flags.push(flag);
  }
  const cast = ctx.type === 'integer' || ctx.type === 'number' ? 'DOUBLE' : ctx.type === 'date' ? 'DATE' : null;
  if (!cast) return flags;
  for (const rule of ['minimum', 'maximum'] as const) {
    const limit = constraints[rule];
    if (limit === undefined) continue;
    const operator = rule === 'minimum' ? '<' : '>';
    const at = ctx.missingCodes.length + 1;
    const condition = `${present} AND ${ctx.v} ${operator} TRY_CAST($${at} AS ${cast})`;
    const flag = await outside(ctx, rule, String(limit), condition, [...ctx.missingCodes, String(limit)], (count, listed) =>
      `${holding(count)} ${rule === 'minimum' ? 'below the minimum' : 'above the maximum'} of ${limit}: ${listed}`,
    );
    if (flag) flags.push(flag);
  }
  return flags;
}

async function outside(
  ctx: ColumnContext,
  rule: 'enum' | 'minimum' | 'maximum',
  limit: string | null,
  condition: string,
  params: string[],
  describe: (count: number, listed: string) => string,
): Promise<Flag | null> {
  const { values, count, distinct } = await valuesWhere(ctx, condition, params);
  if (count === 0) return null;
  const listed = values.map((v) => `${shown(v.value)}${v.count > 1 ? ` ×${v.count}` : ''}`).join(', ') + (values.length < distinct ? ', …' : '');
  return { kind: 'outside-codebook', message: describe(count, listed), rule, limit, values, count, keys: await exampleKeys(ctx, condition, params) };
}

function holding(count: number): string {
  return `${plural(count, 'row')} hold${count === 1 ? 's a value' : ' values'}`;
}
