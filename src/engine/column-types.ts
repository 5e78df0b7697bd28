import type { Session } from './session.js';
import { ident } from './sql.js';
import { keyExpression } from './keys.js';
import { columnsOf } from './load-table.js';
import { textSql } from './value-text.js';

/** The value types errata works with, in Frictionless Table Schema's names. */
export type ValueType = 'string' | 'integer' | 'number' | 'boolean' | 'date';

export const SQL_TYPE: Record<ValueType, string> = {
  string: 'VARCHAR',
  integer: 'BIGINT',
  number: 'DOUBLE',
  boolean: 'BOOLEAN',
  date: 'DATE',
};

/**
 * What text counts as each type. Written out rather than left to TRY_CAST, which accepts " 12",
 * "12.0" as an integer and "1e3" as 1000: a value must look like its type to take it. A leading zero
 * ("007") makes a value a code, not a number, so it keeps its text.
 */
const INTEGER_TEXT = `'-?(0|[1-9][0-9]{0,17})'`;
const NUMBER_TEXT = `'-?(0|[1-9][0-9]*)(\\.[0-9]+)?([eE][-+]?[0-9]+)?'`;
const DATE_TEXT = `'[0-9]{4}-[0-9]{2}-[0-9]{2}'`;

// A failed TRY_CAST costs far more than a regex, so each cast runs only where the pattern matched
// (CASE evaluates a branch only for the rows that reach it; AND does not promise that).
const TEXT_FITS: Record<Exclude<ValueType, 'string'>, (v: string) => string> = {
  integer: (v) => `regexp_full_match(${v}, ${INTEGER_TEXT})`,
  number: (v) => `(CASE WHEN regexp_full_match(${v}, ${NUMBER_TEXT}) THEN TRY_CAST(${v} AS DOUBLE) IS NOT NULL ELSE false END)`,
  boolean: (v) => `(lower(${v}) IN ('true', 'false'))`,
  date: (v) => `(CASE WHEN regexp_full_match(${v}, ${DATE_TEXT}) THEN TRY_CAST(${v} AS DATE) IS NOT NULL ELSE false END)`,
};

/** SQL that is true when a text value fits `type` (always true for string). */
export function fitsTypeSql(valueSql: string, type: ValueType): string {
  return type === 'string' ? 'true' : TEXT_FITS[type](valueSql);
}

/**
 * SQL converting text that fits `type` into that type. TRY_CAST because SQL does not promise to
 * evaluate a guarding condition first; callers check fit separately.
 */
export function castTextSql(valueSql: string, type: ValueType): string {
  if (type === 'boolean') return `(lower(${valueSql}) = 'true')`;
  return `TRY_CAST(${valueSql} AS ${SQL_TYPE[type]})`;
}

/**
 * SQL giving a text as `type` when it fits, else null: one pattern match and one cast, where testing
 * the fit and then casting would cast twice.
 */
export function fittingValueSql(valueSql: string, type: ValueType): string {
  switch (type) {
    case 'string':
      return valueSql;
    case 'boolean':
      return `(CASE WHEN ${TEXT_FITS.boolean(valueSql)} THEN lower(${valueSql}) = 'true' END)`;
    case 'integer':
      return `(CASE WHEN ${TEXT_FITS.integer(valueSql)} THEN TRY_CAST(${valueSql} AS BIGINT) END)`;
    case 'number':
      return `(CASE WHEN regexp_full_match(${valueSql}, ${NUMBER_TEXT}) THEN TRY_CAST(${valueSql} AS DOUBLE) END)`;
    case 'date':
      return `(CASE WHEN regexp_full_match(${valueSql}, ${DATE_TEXT}) THEN TRY_CAST(${valueSql} AS DATE) END)`;
  }
}

/**
 * A column grouped once: a table of its distinct values (null among them) under the column's own
 * name, with the rows holding each under `rowsColumn(column)`. Detection and the profile both read it.
 */
export type GroupedColumns = ReadonlyMap<string, string>;

/** The name of the row-count column of a grouped column: one the column's own name cannot be. */
export function rowsColumn(column: string): string {
  return column === 'rows_holding' ? 'rows_holding_value' : 'rows_holding';
}

/**
 * Group each of `columns` into its own temporary table (see GroupedColumns); `unique` names a column
 * known to hold each value once, which gets a view counting each row once instead. The caller drops
 * them with `dropGroupedColumns`.
 */
export async function groupColumns(session: Session, table: string, columns: readonly string[], unique: string | null): Promise<Map<string, string>> {
  const grouped = new Map<string, string>();
  for (const [i, column] of columns.entries()) {
    const [v, k] = [ident(column), ident(rowsColumn(column))];
    const name = column === unique ? `${GROUPED}${i}${VIEW}` : `${GROUPED}${i}`;
    if (column === unique) await session.run(`CREATE OR REPLACE TEMP VIEW ${ident(name)} AS SELECT ${v}, CAST(1 AS BIGINT) AS ${k} FROM ${ident(table)}`);
    else await session.run(`CREATE OR REPLACE TEMP TABLE ${ident(name)} AS SELECT ${v}, count(*) AS ${k} FROM ${ident(table)} GROUP BY ALL`);
    grouped.set(column, name);
  }
  return grouped;
}

const GROUPED = '__errata_grouped_';
const VIEW = '_view';

/** A table's text columns, each grouped once (groupColumns), with the type decided for each. */
export interface TextColumns {
  types: ReadonlyMap<string, ValueType>;
  grouped: GroupedColumns;
}

/**
 * Group a loaded table's text columns once and decide each one's type from its groups, by the build's
 * rule (no value rewritten). The key has been checked. For the profile, which casts distinct values
 * rather than the table; the caller drops the groups (dropGroupedColumns) when done.
 */
export async function decideFromGroups(session: Session, table: string, key: readonly string[], declared: ReadonlyMap<string, ValueType>): Promise<{ typings: ColumnTyping[]; text: TextColumns }> {
  // Text columns only: a Parquet delivery is typed already.
  const texts = (await columnsOf(session, table)).filter((c) => c.type === 'VARCHAR').map((c) => c.name);
  const grouped = await groupColumns(session, table, texts, key.length === 1 ? key[0] : null);
  const typings = await decideColumnTypes(session, table, key, declared, { keyChecked: true, grouped });
  const types = new Map<string, ValueType>(texts.map((c) => [c, 'string']));
  for (const t of typings) types.set(t.column, t.type);
  return { typings, text: { types, grouped } };
}

export async function dropGroupedColumns(session: Session, grouped: GroupedColumns): Promise<void> {
  for (const name of grouped.values()) await session.run(`DROP ${name.endsWith(VIEW) ? 'VIEW' : 'TABLE'} IF EXISTS ${ident(name)}`);
}

export interface ColumnTyping {
  column: string;
  /** The type the column takes in the build. */
  type: ValueType;
  /** The type the codebook declares, if any. */
  declared?: ValueType;
  /** Non-missing values that do not fit the declared type (or, undeclared, the type most values fit). */
  misfits: number;
  /** The type the misfits stop the column from taking. */
  wanted?: ValueType;
  /** The misfits are numbers that would print differently (trailing zeros, exponents), not non-numbers. */
  rewritten?: boolean;
  examples: Array<{ key: string; value: string }>;
}

/**
 * Detection (unlike a declared type) never changes how a value is written: a column becomes a number
 * only if every value prints back exactly as delivered (see value-text.ts), so "1.50" or "1e3" keep
 * their text.
 */
const DETECTS_AS: Record<Exclude<ValueType, 'string'>, (v: string) => string> = {
  ...TEXT_FITS,
  number: (v) => `(CASE WHEN regexp_full_match(${v}, ${INTEGER_TEXT}) THEN true
    WHEN regexp_full_match(${v}, ${NUMBER_TEXT}) THEN ${textSql(`TRY_CAST(${v} AS DOUBLE)`, 'DOUBLE')} = ${v} ELSE false END)`,
};

const DETECTION_ORDER: Exclude<ValueType, 'string'>[] = ['integer', 'number', 'boolean', 'date'];

/** Share of values that must fit a type before the rest are reported as "stored as text". */
const MOSTLY = 0.9;

/**
 * Decide each text column's type from every value in it (never a sample, so a bad value in the last
 * row is seen the same way on every run). A declared type is taken only when every value fits it; when
 * some do not, the column stays text and the misfits are reported for a correction to deal with.
 * With `preserveText` (the build's rule, the default) a column becomes a number only if no value would
 * be rewritten; without it (comparison only, as in a diff) any column of numbers is numeric, so 1.000
 * and 1 compare equal. `keyChecked`: the caller has made sure no two rows share the key. `grouped`:
 * columns already grouped (groupColumns), read instead of grouping them again.
 */
export async function decideColumnTypes(
  session: Session,
  table: string,
  key: readonly string[],
  declared: ReadonlyMap<string, ValueType>,
  options: { preserveText?: boolean; only?: ReadonlySet<string>; keyChecked?: boolean; grouped?: GroupedColumns } = {},
): Promise<ColumnTyping[]> {
  const preserveText = options.preserveText ?? true;
  const columns = await columnsOf(session, table);
  const text = columns.filter((c) => c.type === 'VARCHAR' && (!options.only || options.only.has(c.name))).map((c) => c.name);
  if (text.length === 0) return [];
  // A checked single-column key holds each value once: grouping it would only cost time (0.2 s a million rows).
  const distinctByKey = options.keyChecked && key.length === 1 ? key[0] : null;
  const counted = await countTypeFits(
    session,
    text.map((name) => {
      const grouped = options.grouped?.get(name);
      if (grouped) return `SELECT ${ident(name)} AS v, ${ident(rowsColumn(name))} AS k FROM ${ident(grouped)}`;
      return name === distinctByKey ? `SELECT ${ident(name)} AS v, 1 AS k FROM ${ident(table)}` : valueCountsSql(table, name);
    }),
  );
  const result: ColumnTyping[] = [];
  for (const [i, column] of text.entries()) {
    const counts = counted[i];
    const n = counts.n;
    const fits = (type: Exclude<ValueType, 'string'>) => counts[type];
    const wantedType = declared.get(column);
    let typing: ColumnTyping;
    if (wantedType) {
      const misfits = wantedType === 'string' ? 0 : n - fits(wantedType);
      typing = { column, declared: wantedType, type: misfits === 0 ? wantedType : 'string', misfits, wanted: misfits ? wantedType : undefined, examples: [] };
    } else {
      const full = detectedType(counts, preserveText);
      // Every value is a number, but some would print differently (66.0 as 66): keep the text, say so.
      const rewritten = full === 'string' && n > 0 && fits('number') === n;
      const mostly = full !== 'string' || rewritten ? undefined : DETECTION_ORDER.find((type) => n > 0 && fits(type) >= MOSTLY * n);
      typing = {
        column,
        type: full,
        misfits: rewritten ? n - (preserveText ? counts.exactnumber : counts.number) : mostly ? n - fits(mostly) : 0,
        wanted: rewritten ? 'number' : mostly,
        rewritten: rewritten || undefined,
        examples: [],
      };
    }
    if (typing.misfits > 0 && typing.wanted) {
      const v = ident(column);
      const misfit = typing.rewritten ? `NOT ${DETECTS_AS.number(v)}` : `NOT ${fitsTypeSql(v, typing.wanted)}`;
      typing.examples = await misfitExamples(session, table, key, column, misfit);
    }
    result.push(typing);
  }
  return result;
}

/**
 * How many of a column's non-missing values fit each type; `exactnumber` counts the numbers that
 * also print back exactly as written (DETECTS_AS). Counts add up: the counts of two sets of rows are
 * the sums of theirs, which lets a diff work out one side's from the other's and the rows that differ.
 */
export interface TypeFits {
  n: number;
  integer: number;
  number: number;
  boolean: number;
  date: number;
  exactnumber: number;
}

/**
 * Count type fits for each source: a query giving values `v` with weights `k` (the rows holding each
 * value, or a negative weight to take rows away). Each check runs once per distinct value, not once
 * per row where the source groups them: coded columns have few distinct values, and the checks cost
 * more than the grouping. All sources are counted in one query.
 */
export async function countTypeFits(session: Session, sources: readonly string[]): Promise<TypeFits[]> {
  if (sources.length === 0) return [];
  const checks = [
    ...DETECTION_ORDER.map((type) => `COALESCE(sum(k) FILTER (WHERE ${TEXT_FITS[type]('v')}), 0) AS "${type}"`),
    `COALESCE(sum(k) FILTER (WHERE ${DETECTS_AS.number('v')}), 0) AS "exactnumber"`,
  ];
  const perSource = sources.map((values, i) => `SELECT ${i} AS i, COALESCE(sum(k) FILTER (WHERE v IS NOT NULL), 0) AS n, ${checks.join(', ')} FROM (${values})`);
  const rows = await session.all<Record<string, number | bigint>>(perSource.join('\nUNION ALL\n'));
  const result: TypeFits[] = [];
  for (const row of rows) {
    result[Number(row.i)] = {
      n: Number(row.n),
      integer: Number(row.integer),
      number: Number(row.number),
      boolean: Number(row.boolean),
      date: Number(row.date),
      exactnumber: Number(row.exactnumber),
    };
  }
  return result;
}

/** A column's distinct values `v` with the rows holding each `k`: a source for countTypeFits. */
export function valueCountsSql(table: string, column: string): string {
  return `SELECT ${ident(column)} AS v, count(*) AS k FROM ${ident(table)} GROUP BY ALL`;
}

/** The type fits of each of `columns` of `table`, counted over every row. */
export async function columnTypeFits(session: Session, table: string, columns: readonly string[]): Promise<Map<string, TypeFits>> {
  const fits = await countTypeFits(session, columns.map((c) => valueCountsSql(table, c)));
  return new Map(columns.map((c, i) => [c, fits[i]]));
}

/** The first type every value fits (string when none, or when there are no values). */
export function detectedType(fits: TypeFits, preserveText: boolean): ValueType {
  if (fits.n <= 0) return 'string';
  const detects = (type: Exclude<ValueType, 'string'>) => (type === 'number' && preserveText ? fits.exactnumber : fits[type]);
  return DETECTION_ORDER.find((type) => detects(type) === fits.n) ?? 'string';
}

/** The sum of two sets of counts (see TypeFits). */
export function addTypeFits(a: TypeFits, b: TypeFits): TypeFits {
  return {
    n: a.n + b.n,
    integer: a.integer + b.integer,
    number: a.number + b.number,
    boolean: a.boolean + b.boolean,
    date: a.date + b.date,
    exactnumber: a.exactnumber + b.exactnumber,
  };
}

async function misfitExamples(session: Session, table: string, key: readonly string[], column: string, misfit: string) {
  const v = ident(column);
  // A file loaded without a key names its rows by position: data row 1 is the first row after the header.
  const [name, order] = key.length ? [keyExpression(key), key.map(ident).join(', ')] : ['CAST(rowid + 1 AS VARCHAR)', 'rowid'];
  return session.all<{ key: string; value: string }>(`
    SELECT ${name} AS key, ${v} AS value FROM ${ident(table)}
    WHERE ${v} IS NOT NULL AND ${misfit}
    ORDER BY ${order} LIMIT 5`);
}

/** Cast the columns whose decided type is not text, each in place (the rest of the table is untouched). */
export async function applyColumnTypes(session: Session, table: string, typings: readonly ColumnTyping[]): Promise<void> {
  for (const t of typings.filter((typing) => typing.type !== 'string')) {
    const c = ident(t.column);
    await session.run(`ALTER TABLE ${ident(table)} ALTER ${c} SET DATA TYPE ${SQL_TYPE[t.type]} USING ${castTextSql(c, t.type)}`);
  }
}

/** The errata type of a DuckDB column type. */
export function valueTypeOf(sqlType: string): ValueType {
  if (/^(BIGINT|INTEGER|SMALLINT|TINYINT|HUGEINT|UBIGINT|UINTEGER|USMALLINT|UTINYINT)$/.test(sqlType)) return 'integer';
  if (/^(DOUBLE|FLOAT|REAL|DECIMAL.*)$/.test(sqlType)) return 'number';
  if (sqlType === 'BOOLEAN') return 'boolean';
  if (sqlType === 'DATE') return 'date';
  return 'string';
}
