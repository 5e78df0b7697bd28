import { ident } from '../engine/sql.js';
import type { ColumnContext } from './column-context.js';
import type { Frequency, ValueCount } from './types.js';

/** How many of the most frequent values `top` lists. */
export const TOP_VALUES = 5;
/** A text column with at most this many distinct values is a coded variable (sex, site, yes/no). */
export const CODED_MAX_DISTINCT = 20;
/** A codebook's enum or labels make a column coded up to this many distinct values. */
export const CODEBOOK_CODED_MAX_DISTINCT = 50;

/**
 * Whether a column is a coded variable, so gets a frequency table: its codebook lists codes (enum or
 * labels) and it has at most 50 distinct values; or it is text or true/false, not a key, with at most 20
 * distinct values, some of which repeat.
 */
export function isCoded(ctx: ColumnContext, n: number, distinct: number, isKey: boolean): boolean {
  if (distinct === 0) return false;
  if (ctx.field?.constraints.enum?.length || Object.keys(ctx.field?.labels ?? {}).length) return distinct <= CODEBOOK_CODED_MAX_DISTINCT;
  return !isKey && (ctx.type === 'string' || ctx.type === 'boolean') && distinct <= CODED_MAX_DISTINCT && distinct < n;
}

export interface ValueCounts {
  /** The most frequent values, ties in value order. */
  top: ValueCount[];
  /** Every value in value order (numbers by size, text by code point), when `all` was asked for. */
  all: ValueCount[] | null;
}

/** Counts of a column's values: the most frequent, and with `all` every distinct value. */
export async function valueCounts(ctx: ColumnContext, all: boolean): Promise<ValueCounts> {
  if (!all) {
    const rows = await ctx.session.all<{ value: string; count: bigint }>(
      `SELECT ${ctx.text} AS value, ${ctx.count} AS count
       FROM ${ident(ctx.counts)}
       WHERE ${ctx.v} IS NOT NULL
       ORDER BY count DESC, ${ctx.v}
       LIMIT ${TOP_VALUES}`,
    );
    return { top: rows.map((r) => ({ value: r.value, count: Number(r.count) })), all: null };
  }
  const rows = await ctx.session.all<{ value: string; count: bigint }>(
    `SELECT ${ctx.text} AS value, ${ctx.count} AS count
     FROM ${ident(ctx.counts)}
     WHERE ${ctx.v} IS NOT NULL
     ORDER BY ${ctx.v}`,
  );
  const inOrder = rows.map((r) => ({ value: r.value, count: Number(r.count) }));
  // A stable sort keeps value order among equal counts.
  const top = [...inOrder].sort((a, b) => b.count - a.count).slice(0, TOP_VALUES);
  return { top, all: inOrder };
}

/**
 * A frequency table: each value with its label, count, percent of all rows and cumulative percent, and
 * missing as its own last row (shown even at zero, so the table always accounts for every row).
 */
export function frequencyTable(values: readonly ValueCount[], missing: number, labels: Record<string, string> | undefined): Frequency[] {
  const total = values.reduce((sum, v) => sum + v.count, 0) + missing;
  const percent = (count: number) => (total === 0 ? 0 : Math.round((count / total) * 10000) / 100);
  let running = 0;
  const rows: Frequency[] = values.map((v) => {
    running += v.count;
    return { value: v.value, label: labels?.[v.value] ?? null, count: v.count, percent: percent(v.count), cumulative: percent(running) };
  });
  running += missing;
  rows.push({ value: null, label: null, count: missing, percent: percent(missing), cumulative: percent(running) });
  return rows;
}
