import { valueTypeOf } from '../engine/column-types.js';
import { keyExpression } from '../engine/keys.js';
import { columnsOf, type ColumnInfo } from '../engine/load-table.js';
import type { Session } from '../engine/session.js';
import { ident } from '../engine/sql.js';
import { textSql } from '../engine/value-text.js';
import { fieldOf, type Codebook } from '../project/codebook.js';
import { codeVariantFlags } from './code-variants.js';
import { codebookFlags } from './codebook-limits.js';
import { EXAMPLE_KEYS, textShape, type ColumnContext } from './column-context.js';
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
}

/** Counts and order statistics of every column, gathered in one scan of the table. */
interface Basics {
  rows: number;
  n: number[];
  distinct: number[];
  min: Array<number | null>;
  max: Array<number | null>;
  quartiles: Array<number[] | null>;
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
  const basics = await gatherBasics(session, table, columns);
  const profiles: ColumnProfile[] = [];
  for (const [i, column] of columns.entries()) {
    const field = fieldOf(options.codebook, column.name);
    const ctx: ColumnContext = {
      session,
      table,
      column: column.name,
      sqlType: column.type,
      type: valueTypeOf(column.type),
      keySql: keyExpression(keyColumns),
      keyOrder: keyColumns.map(ident).join(', '),
      field,
      missingCodes: (field?.missingValues ?? options.codebook?.missingValues ?? []).filter((code) => code !== ''),
      v: ident(column.name),
      text: textSql(ident(column.name), column.type),
      shape: column.type === 'VARCHAR' ? await textShape(session, table, column.name) : null,
    };
    profiles.push(await profileColumn(ctx, basics, i, options.key.includes(column.name)));
  }
  return { table: options.name, source: options.source, rows: basics.rows, key: [...options.key], columns: profiles };
}

async function profileColumn(ctx: ColumnContext, basics: Basics, i: number, isKey: boolean): Promise<ColumnProfile> {
  const n = basics.n[i];
  const distinct = basics.distinct[i];
  const missing = basics.rows - n;
  const numeric = ctx.type === 'integer' || ctx.type === 'number';
  const coded = isCoded(ctx, n, distinct, isKey);
  const counts = await valueCounts(ctx, coded);
  const min = basics.min[i];
  const max = basics.max[i];
  const quartiles = basics.quartiles[i];
  const moments = numeric && n > 0 ? await columnMoments(ctx.session, ctx.table, ctx.column, ctx.sqlType) : null;
  const bins = numeric && !isKey && n > 0 && min !== null && max !== null ? await histogram(ctx.session, ctx.table, ctx.column, binLayout(min, max, n, ctx.type === 'integer')) : null;
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

async function gatherBasics(session: Session, table: string, columns: readonly ColumnInfo[]): Promise<Basics> {
  const parts = ['count(*) AS "rows"'];
  for (const [i, column] of columns.entries()) {
    const v = ident(column.name);
    parts.push(`count(${v}) AS "n${i}"`, `count(DISTINCT ${v}) AS "d${i}"`);
    const type = valueTypeOf(column.type);
    if (type === 'integer' || type === 'number') {
      parts.push(`min(${v}) AS "lo${i}"`, `max(${v}) AS "hi${i}"`, `quantile_cont(${v}, [0.25, 0.5, 0.75]) AS "q${i}"`);
    }
  }
  const row = await session.one<Record<string, unknown>>(`SELECT ${parts.join(',\n  ')} FROM ${ident(table)}`);
  const number = (value: unknown) => (value === null || value === undefined ? null : Number(value));
  return {
    rows: Number(row.rows),
    n: columns.map((_, i) => Number(row[`n${i}`])),
    distinct: columns.map((_, i) => Number(row[`d${i}`])),
    min: columns.map((_, i) => number(row[`lo${i}`])),
    max: columns.map((_, i) => number(row[`hi${i}`])),
    quartiles: columns.map((_, i) => (Array.isArray(row[`q${i}`]) ? (row[`q${i}`] as unknown[]).map(Number) : null)),
  };
}

/** The lowest and highest values with the keys of their rows; ties in key order. */
async function extremes(ctx: ColumnContext): Promise<Extremes> {
  const end = (direction: 'ASC' | 'DESC') =>
    ctx.session.all<{ key: string; value: string }>(
      `SELECT ${ctx.keySql} AS key, ${ctx.text} AS value
       FROM ${ident(ctx.table)}
       WHERE ${ctx.v} IS NOT NULL
       ORDER BY ${ctx.v} ${direction}, ${ctx.keyOrder}
       LIMIT ${EXAMPLE_KEYS}`,
    );
  const pick = (rows: Array<{ key: string; value: string }>) => rows.map((r) => ({ key: r.key, value: r.value }));
  return { lowest: pick(await end('ASC')), highest: pick(await end('DESC')) };
}
