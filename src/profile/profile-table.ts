import { SQL_TYPE, rowsColumn, valueTypeOf, type TextColumns } from '../engine/column-types.js';
import { keyExpression } from '../engine/keys.js';
import { columnsOf } from '../engine/load-table.js';
import type { Session } from '../engine/session.js';
import { ident } from '../engine/sql.js';
import { textSql } from '../engine/value-text.js';
import { fieldOf, type Codebook } from '../project/codebook.js';
import { codeVariantFlags } from './code-variants.js';
import { codebookFlags } from './codebook-limits.js';
import { EXAMPLE_KEYS, createCounts, dropCounts, textColumn, textShape, type ColumnContext } from './column-context.js';
import { quantileRanksSql, rankedCounts, type7 } from './counted-quartiles.js';
import { frequencyTable, isCoded, valueCounts } from './frequencies.js';
import { binLayout, histogram } from './histogram.js';
import { columnMoments } from './moments.js';
import { numberAsText } from './number-as-text.js';
import { sentinelFlags } from './sentinels.js';
import type { ColumnProfile, Extremes, Flag, ProfileSource, TableProfile } from './types.js';

export interface ProfileTableOptions {
  /** The name the profile reports: the project's table name, or the file's name. */
  name: string;
  source: ProfileSource;
  /** Key columns; when empty, `rowColumn` addresses the rows. */
  key: readonly string[];
  /** A column of data row numbers standing in for a key; it is not profiled. */
  rowColumn?: string;
  codebook: Codebook | null;
  /**
   * The table's text columns, grouped once, with their decided types (decideFromGroups): each group is
   * read instead of grouping again, and a column typed other than text is profiled as that type by
   * casting its distinct texts instead of every row; rows are then found by their text.
   */
  text?: TextColumns;
}

/** Counts and order statistics of one column, read off its distinct values and their counts. */
interface Basics {
  n: number;
  distinct: number;
  min: number | null;
  max: number | null;
  /** Quartiles 1, 2 and 3 (type 7), for numeric columns. */
  quartiles: number[] | null;
}

/**
 * Profile every column of a table held in `session`: type, n, missing, distinct, most frequent values;
 * for coded variables a frequency table; for numeric ones mean, sd, quartiles (Hyndman–Fan type 7:
 * DuckDB's quantile_cont interpolates at (n − 1)·p between order statistics) and a histogram; for
 * numbers and dates the extreme values with their keys; and the flags (numbers stored as text,
 * sentinel codes, values outside the codebook, variant spellings of a code). Key columns get no
 * histogram, extremes or sentinel flags: they are identifiers, not measurements.
 *
 * @example
 *   await profileTable(session, 'clean_visits', { name: 'visits', source: 'clean', key: ['participant_id'], codebook })
 */
export async function profileTable(session: Session, table: string, options: ProfileTableOptions): Promise<TableProfile> {
  const keyColumns = options.key.length ? [...options.key] : options.rowColumn ? [options.rowColumn] : [];
  if (keyColumns.length === 0) throw new Error('profileTable needs a key or a row-number column');
  const columns = (await columnsOf(session, table)).filter((c) => c.name !== options.rowColumn);
  const rows = Number((await session.one<{ n: bigint }>(`SELECT count(*) AS n FROM ${ident(table)}`)).n);
  const profiles: ColumnProfile[] = [];
  for (const column of columns) {
    const field = fieldOf(options.codebook, column.name);
    // Loading has checked the key: a single key column holds each value once.
    const isKey = options.key.includes(column.name);
    // A group holds the column's texts: it serves only while the table still holds the column as text.
    const group = column.type === 'VARCHAR' ? options.text?.grouped.get(column.name) : undefined;
    const decided = group ? options.text?.types.get(column.name) : undefined;
    const castTo = decided && decided !== 'string' ? decided : undefined;
    const sqlType = castTo ? SQL_TYPE[castTo] : column.type;
    const { counts, texts } = await createCounts(session, table, column.name, { unique: isKey && options.key.length === 1, grouped: group ? { table: group, castTo } : undefined });
    const ctx: ColumnContext = {
      session,
      table,
      column: column.name,
      sqlType,
      type: valueTypeOf(sqlType),
      keySql: keyExpression(keyColumns),
      keyOrder: keyColumns.map(ident).join(', '),
      counts,
      count: ident(rowsColumn(column.name)),
      texts,
      field,
      missingCodes: (field?.missingValues ?? options.codebook?.missingValues ?? []).filter((code) => code !== ''),
      v: ident(column.name),
      text: textSql(ident(column.name), sqlType),
      // Identifiers are not measurements: whether a key looks numeric is not a finding.
      shape: sqlType === 'VARCHAR' && !isKey ? await textShape(session, counts, column.name) : null,
    };
    profiles.push(await profileColumn(ctx, rows, await gatherBasics(ctx), isKey));
  }
  await dropCounts(session);
  return { table: options.name, source: options.source, rows, key: [...options.key], columns: profiles };
}

async function profileColumn(ctx: ColumnContext, rows: number, basics: Basics, isKey: boolean): Promise<ColumnProfile> {
  const { n, distinct, min, max, quartiles } = basics;
  const missing = rows - n;
  const numeric = ctx.type === 'integer' || ctx.type === 'number';
  const coded = isCoded(ctx, n, distinct, isKey);
  const counts = await valueCounts(ctx, coded);
  const moments = numeric && n > 0 ? await columnMoments(ctx.session, ctx.counts, ctx.column, ctx.sqlType, rowsColumn(ctx.column)) : null;
  const bins = numeric && !isKey && n > 0 && min !== null && max !== null ? await histogram(ctx.session, ctx.counts, ctx.column, binLayout(min, max, n, ctx.type === 'integer'), rowsColumn(ctx.column)) : null;
  const flags = await columnFlags(ctx, distinct, isKey);
  return {
    name: ctx.column,
    type: ctx.type,
    n,
    missing,
    distinct,
    mean: moments?.mean ?? null,
    sd: moments?.sd ?? null,
    min: numeric ? min : null,
    q1: numeric && quartiles ? quartiles[0] : null,
    median: numeric && quartiles ? quartiles[1] : null,
    q3: numeric && quartiles ? quartiles[2] : null,
    max: numeric ? max : null,
    top: counts.top,
    histogram: bins,
    extremes: (numeric || ctx.type === 'date') && n > 0 && !isKey ? await extremes(ctx) : null,
    frequencies: counts.all ? frequencyTable(counts.all, missing, ctx.field?.labels) : null,
    flags,
  };
}

/** The flags in a fixed order: numbers stored as text, sentinels (not for keys), codebook limits, variant spellings. */
async function columnFlags(ctx: ColumnContext, distinct: number, isKey: boolean): Promise<Flag[]> {
  const asText = await numberAsText(ctx);
  return [
    ...(asText ? [asText] : []),
    ...(isKey ? [] : await sentinelFlags(ctx)),
    ...(await codebookFlags(ctx)),
    ...(await codeVariantFlags(ctx, distinct)),
  ];
}

const QUARTILES = [0.25, 0.5, 0.75];

/** n, distinct, and for numeric columns min, max and the type 7 quartiles, from the column's counts. */
async function gatherBasics(ctx: ColumnContext): Promise<Basics> {
  const numeric = ctx.type === 'integer' || ctx.type === 'number';
  const kept = `(SELECT ${ctx.v} AS x, ${ctx.count} AS k FROM ${ident(ctx.counts)} WHERE ${ctx.v} IS NOT NULL)`;
  if (!numeric) {
    const row = await ctx.session.one<{ n: bigint | null; d: bigint }>(`SELECT sum(k) AS n, count(*) AS d FROM ${kept}`);
    return { n: Number(row.n ?? 0), distinct: Number(row.d), min: null, max: null, quartiles: null };
  }
  const row = await ctx.session.one<Record<string, number | bigint | null>>(
    `SELECT min(total) AS n, count(*) AS d, min(x) AS lo, max(x) AS hi,
       ${QUARTILES.map((p, i) => quantileRanksSql(p, `q${i}`)).join(', ')}
     FROM ${rankedCounts(kept)}`,
  );
  const n = Number(row.n ?? 0);
  if (n === 0) return { n, distinct: 0, min: null, max: null, quartiles: null };
  const quartiles = QUARTILES.map((p, i) => type7(n, p, Number(row[`q${i}_a`]), Number(row[`q${i}_b`])));
  return { n, distinct: Number(row.d), min: Number(row.lo), max: Number(row.hi), quartiles };
}

/**
 * The lowest and highest values with the keys of their rows; ties in key order. The values at each
 * end come from the counts (only as many as hold the first few rows: a coded column's lowest value
 * alone often does), so the rows are only matched against them, never cast or sorted by value.
 */
async function extremes(ctx: ColumnContext): Promise<Extremes> {
  const [match, value, place] = ['__errata_match', '__errata_value', '__errata_place'].map(ident);
  const end = (direction: 'ASC' | 'DESC') => {
    const nearest = `(SELECT ${ctx.v}, ${ctx.count} FROM ${ident(ctx.counts)} WHERE ${ctx.v} IS NOT NULL ORDER BY ${ctx.v} ${direction} LIMIT ${EXAMPLE_KEYS})`;
    const ends = `(SELECT ${ctx.v} AS ${value}, ${place} FROM (
        SELECT ${ctx.v}, row_number() OVER (ORDER BY ${ctx.v} ${direction}) AS ${place},
          coalesce(sum(${ctx.count}) OVER (ORDER BY ${ctx.v} ${direction} ROWS BETWEEN UNBOUNDED PRECEDING AND 1 PRECEDING), 0) AS rows_before
        FROM ${nearest})
      WHERE rows_before < ${EXAMPLE_KEYS})`;
    // A column held as text is matched by the texts of those values.
    const matches = ctx.texts
      ? `(SELECT t.${ident(textColumn(ctx.column))} AS ${match}, e.${value}, e.${place} FROM ${ident(ctx.texts)} AS t JOIN ${ends} AS e ON t.${ctx.v} = e.${value})`
      : `(SELECT ${value} AS ${match}, ${value}, ${place} FROM ${ends})`;
    return ctx.session.all<{ key: string; value: string }>(
      `SELECT ${ctx.keySql} AS key, ${textSql(`e.${value}`, ctx.sqlType)} AS value
       FROM ${ident(ctx.table)} AS cells JOIN ${matches} AS e ON cells.${ctx.v} = e.${match}
       ORDER BY e.${place}, ${ctx.keyOrder}
       LIMIT ${EXAMPLE_KEYS}`,
    );
  };
  const pick = (rows: Array<{ key: string; value: string }>) => rows.map((r) => ({ key: r.key, value: r.value }));
  return { lowest: pick(await end('ASC')), highest: pick(await end('DESC')) };
}
