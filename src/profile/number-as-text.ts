import { fitsTypeSql } from '../engine/column-types.js';
import { textSql } from '../engine/value-text.js';
import { exampleKeys, plural, valuesWhere, type ColumnContext } from './column-context.js';
import type { Flag } from './types.js';

/** Share of a text column's values that must be numbers before the rest are reported as blocking. */
const MOSTLY_NUMBERS = 0.5;
/** Blocking values named in the message (the flag's `blocking` lists more). */
const IN_MESSAGE = 5;

/**
 * A text column that holds numbers, and the values that keep it text.
 *
 * Flagged when the codebook declares the column integer or number and any value does not fit, or,
 * undeclared, when at least half its values are numbers. The blocking values are those that are not
 * numbers ("n/a", "<5", "12,5"), or, when every value is a number, those that would print differently
 * once read as one ("1.50", "1e3"), which is why errata's loader kept the column as text. A column the
 * codebook declares `string` is text by decision and is not flagged.
 *
 * @example
 *   await numberAsText(ctx) // { kind: 'number-as-text', type: 'number', blocking: [{ value: 'n/a', count: 2 }], … }
 */
export async function numberAsText(ctx: ColumnContext): Promise<Flag | null> {
  if (!ctx.shape) return null;
  const declared = ctx.field?.type;
  if (declared === 'string' || declared === 'boolean' || declared === 'date') return null;
  const { n, numbers, integers } = ctx.shape;
  if (n === 0 || (numbers === 0 && !declared)) return null;
  if (!declared && numbers < MOSTLY_NUMBERS * n) return null;
  const type = declared === 'integer' || declared === 'number' ? declared : integers === numbers ? 'integer' : 'number';
  const v = ctx.v;
  // Not a number at all, or (all being numbers) one that would not print back as delivered.
  const rewritten = numbers === n && !declared;
  const blocking = rewritten
    ? `${v} IS NOT NULL AND NOT ${fitsTypeSql(v, 'integer')} AND ${textSql(`TRY_CAST(${v} AS DOUBLE)`, 'DOUBLE')} <> ${v}`
    : `${v} IS NOT NULL AND NOT ${fitsTypeSql(v, type)}`;
  const { values, count, distinct } = await valuesWhere(ctx, blocking);
  if (count === 0) return null;
  const listed = values.slice(0, IN_MESSAGE).map((b) => `${JSON.stringify(b.value)}${b.count > 1 ? ` ×${b.count}` : ''}`).join(', ') + (IN_MESSAGE < distinct ? ', …' : '');
  const what = type === 'integer' ? 'whole numbers' : 'numbers';
  const message = rewritten
    ? `every value is a number, but ${plural(count, 'row')} hold${count === 1 ? 's' : ''} one that would print differently as a number (${listed}), so the column stays text; declare it \`type: number\` in the codebook to make it numeric`
    : `${declared ? `declared ${declared}` : 'mostly numbers'}, but ${plural(count, 'row')} hold${count === 1 ? 's' : ''} values that are not ${what}, which keep it text: ${listed}`;
  return { kind: 'number-as-text', message, type, blocking: values, count, keys: await exampleKeys(ctx, blocking) };
}
