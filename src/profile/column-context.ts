import { castTextSql, fitsTypeSql, rowsColumn, type ValueType } from '../engine/column-types.js';
import type { Params, Session } from '../engine/session.js';
import { ident } from '../engine/sql.js';
import type { CodebookField } from '../project/codebook.js';
import type { ValueCount } from './types.js';

/** How a text column's values divide between numbers and the rest (counts of non-missing rows). */
export interface TextShape {
  n: number;
  numbers: number;
  integers: number;
}

/** Everything the analyses of one column need: where it is, how to name its rows, what its codebook says. */
export interface ColumnContext {
  session: Session;
  table: string;
  column: string;
  sqlType: string;
  type: ValueType;
  /** SQL giving a row's key as text. */
  keySql: string;
  /** SQL ORDER BY list putting rows in key order. */
  keyOrder: string;
  /**
   * A table of the column's distinct values (under the column's own name, null included) with how many
   * rows hold each: the column grouped once, which the analyses read instead of the rows.
   */
  counts: string;
  /** The row-count column of `counts`, quoted. */
  count: string;
  /**
   * Set when the table holds the column as text and the profile reads it as `type`: a table of the
   * column's distinct texts (in the column `textColumn` names) beside their typed values (under the column's name),
   * through which rows are found by their text. Null when the table holds the column as profiled.
   */
  texts: string | null;
  field: CodebookField | undefined;
  /** Texts the codebook declares missing for this column (the empty text left out: it is loaded as missing). */
  missingCodes: string[];
  /** The column quoted. */
  v: string;
  /** SQL giving the value as errata writes it. */
  text: string;
  /** For a text column, how many of its values are numbers; null for other columns. */
  shape: TextShape | null;
}

/** How many example keys a flag carries. */
export const EXAMPLE_KEYS = 5;
/** How many distinct values a flag lists. */
export const LISTED_VALUES = 10;

/*
 * A "value condition" below is SQL that refers to the row only through the column's value (ctx.v), so
 * it can be evaluated once per distinct value instead of once per row: a regular expression over a
 * million rows of a five-code column then runs five times.
 */

/** The name of the text column in a `texts` table: one the column's own name cannot be. */
export function textColumn(column: string): string {
  return column === '__errata_text' ? '__errata_text_value' : '__errata_text';
}

/**
 * Group a column once: its distinct values (null among them) with the rows holding each. A column
 * already known to hold each value once (a checked single-column key) needs no grouping: a view
 * counting every row once stands in. A column already grouped (`grouped`, see groupColumns) is read
 * as it is; with `castTo` the table holds it as text and the profile reads it as that type, so each
 * distinct text is cast once (a million rows of a few hundred texts cost a few hundred casts), and
 * since two texts can be one value ("1.5" and "1.50" as numbers) the values are grouped again.
 */
export async function createCounts(
  session: Session,
  table: string,
  column: string,
  options: { unique?: boolean; grouped?: { table: string; castTo?: Exclude<ValueType, 'string'> } } = {},
): Promise<{ counts: string; texts: string | null }> {
  const v = ident(column);
  const k = ident(rowsColumn(column));
  await dropCounts(session);
  const { grouped } = options;
  if (grouped && !grouped.castTo) return { counts: grouped.table, texts: null };
  if (grouped?.castTo) {
    const text = ident(textColumn(column));
    await session.run(`CREATE TEMP TABLE ${ident(TEXTS_TABLE)} AS SELECT ${v} AS ${text}, ${castTextSql(v, grouped.castTo)} AS ${v}, ${k} FROM ${ident(grouped.table)}`);
    // Counts stay BIGINT, as count(*) makes them (sum would widen them to HUGEINT).
    await session.run(`CREATE TEMP TABLE ${ident(COUNTS_TABLE)} AS SELECT ${v}, CAST(sum(${k}) AS BIGINT) AS ${k} FROM ${ident(TEXTS_TABLE)} GROUP BY ALL`);
    return { counts: COUNTS_TABLE, texts: TEXTS_TABLE };
  }
  if (options.unique) {
    await session.run(`CREATE TEMP VIEW ${ident(COUNTS_VIEW)} AS SELECT ${v}, CAST(1 AS BIGINT) AS ${k} FROM ${ident(table)}`);
    return { counts: COUNTS_VIEW, texts: null };
  }
  await session.run(`CREATE TEMP TABLE ${ident(COUNTS_TABLE)} AS SELECT ${v}, count(*) AS ${k} FROM ${ident(table)} GROUP BY ${v}`);
  return { counts: COUNTS_TABLE, texts: null };
}

/** The relations `createCounts` makes, one column at a time. */
const COUNTS_TABLE = '__errata_profile_counts';
const COUNTS_VIEW = '__errata_profile_counts_view';
const TEXTS_TABLE = '__errata_profile_texts';

export async function dropCounts(session: Session): Promise<void> {
  await session.run(`DROP VIEW IF EXISTS ${ident(COUNTS_VIEW)}`);
  await session.run(`DROP TABLE IF EXISTS ${ident(COUNTS_TABLE)}`);
  await session.run(`DROP TABLE IF EXISTS ${ident(TEXTS_TABLE)}`);
}

/**
 * A row condition equivalent to a value condition, with the value condition evaluated per distinct
 * value; a column held as text is matched by the texts of the values that meet it.
 */
export function rowsWhere(ctx: ColumnContext, valueCondition: string): string {
  if (ctx.texts) return `${ctx.v} IN (SELECT ${ident(textColumn(ctx.column))} FROM ${ident(ctx.texts)} WHERE ${valueCondition})`;
  return `${ctx.v} IN (SELECT ${ctx.v} FROM ${ident(ctx.counts)} WHERE ${valueCondition})`;
}

/** Keys of the first rows (in key order) whose value meets `valueCondition`. */
export async function exampleKeys(ctx: ColumnContext, valueCondition: string, params: Params = []): Promise<string[]> {
  const rows = await ctx.session.all<{ key: string }>(
    `SELECT ${ctx.keySql} AS key
     FROM ${ident(ctx.table)}
     WHERE ${rowsWhere(ctx, valueCondition)}
     ORDER BY ${ctx.keyOrder}
     LIMIT ${EXAMPLE_KEYS}`,
    params,
  );
  return rows.map((r) => r.key);
}

/** Distinct values (as text) meeting `valueCondition`, most frequent first; the rows and distinct values in all. */
export async function valuesWhere(ctx: ColumnContext, valueCondition: string, params: Params = []): Promise<{ values: ValueCount[]; count: number; distinct: number }> {
  const rows = await ctx.session.all<{ value: string; count: bigint; total: bigint; kinds: bigint }>(
    `SELECT value, count, sum(count) OVER () AS total, count(*) OVER () AS kinds
     FROM (
       SELECT ${ctx.text} AS value, ${ctx.count} AS count
       FROM ${ident(ctx.counts)}
       WHERE ${valueCondition})
     ORDER BY count DESC, value
     LIMIT ${LISTED_VALUES}`,
    params,
  );
  return {
    values: rows.map((r) => ({ value: r.value, count: Number(r.count) })),
    count: rows.length ? Number(rows[0].total) : 0,
    distinct: rows.length ? Number(rows[0].kinds) : 0,
  };
}

/** Count a text column's numbers and whole numbers, each check once per distinct value. */
export async function textShape(session: Session, counts: string, column: string): Promise<TextShape> {
  const v = ident(column);
  const k = ident(rowsColumn(column));
  const row = await session.one<{ n: bigint | null; numbers: bigint | null; integers: bigint | null }>(
    `SELECT
       sum(${k}) AS n,
       sum(${k}) FILTER (WHERE ${fitsTypeSql(v, 'number')}) AS numbers,
       sum(${k}) FILTER (WHERE ${fitsTypeSql(v, 'integer')}) AS integers
     FROM ${ident(counts)} WHERE ${v} IS NOT NULL`,
  );
  return { n: Number(row.n ?? 0), numbers: Number(row.numbers ?? 0), integers: Number(row.integers ?? 0) };
}

/** `$first, $first+1, …` placeholders for a list of values passed as parameters. */
export function placeholders(count: number, first = 1): string {
  return Array.from({ length: count }, (_, i) => `$${first + i}`).join(', ');
}

/** A value in a message: as it is, or quoted when white space at either end (or nothing) would hide it. */
export function shown(value: string): string {
  return value === '' || /^\s|\s$/.test(value) ? JSON.stringify(value) : value;
}

export function plural(count: number, one: string, many = `${one}s`): string {
  return `${count} ${count === 1 ? one : many}`;
}
