import { castTextSql, fitsTypeSql, fittingValueSql, valueTypeOf, type ValueType } from '../engine/column-types.js';
import type { ColumnInfo } from '../engine/load-table.js';
import { ident } from '../engine/sql.js';
import { textSql } from '../engine/value-text.js';
import type { Session } from '../engine/session.js';
import type { Codebook, CodebookField } from '../project/codebook.js';

/**
 * Query parameters gathered while SQL is composed, so every value from the codebook travels as a
 * parameter. Lists travel as JSON text and are cast in SQL (`listSql`).
 */
export class Params {
  readonly values: Record<string, string | number> = {};
  private readonly reuse = new Map<string, string>();

  /** A placeholder for `value`; the same value reuses its placeholder. */
  add(value: string | number): string {
    const id = `${typeof value}:${value}`;
    const known = this.reuse.get(id);
    if (known) return known;
    const name = `p${Object.keys(this.values).length}`;
    this.values[name] = value;
    this.reuse.set(id, `$${name}`);
    return `$${name}`;
  }

  /** The parameters `sql` uses (DuckDB refuses a statement given parameters it does not use). */
  for(sql: string): Record<string, string | number> {
    const bare = sql.replace(/"(?:[^"]|"")*"|'(?:[^']|'')*'/g, '');
    const used = new Set([...bare.matchAll(/\$(p\d+)\b/g)].map((m) => m[1]));
    return Object.fromEntries(Object.entries(this.values).filter(([name]) => used.has(name)));
  }

  /** SQL for a list of texts, as a list of `sqlType` (VARCHAR by default). */
  listSql(items: readonly string[], sqlType = 'VARCHAR'): string {
    return `CAST(CAST(${this.add(JSON.stringify(items))} AS JSON) AS ${sqlType}[])`;
  }
}

/**
 * How one column of the checked table is read: its text, whether a text counts as missing, whether
 * it fits the declared type, and its value as that type. Every check is phrased over these pieces, so
 * raw text, typed clean data and Parquet columns are checked alike. The pieces are functions of a
 * text so that value checks can run once per distinct value rather than once per row.
 */
export interface ColumnPlan {
  name: string;
  /** DuckDB type of the column as loaded. */
  sqlType: string;
  field?: CodebookField;
  /** The type constraints are checked in: the declared type, or string (the Table Schema default). */
  type: ValueType;
  /** SQL: the cell's text, the way errata writes values everywhere (null when the cell is empty). */
  text: string;
  /** SQL: true when the text `v` is missing (null, or one of the missing-value codes). */
  missing(v: string): string;
  /** SQL: true when the present text `v` fits `type` ('true' when every text does). */
  fits(v: string): string;
  /** SQL: the text `v` as `type`, for comparisons. */
  typed(v: string): string;
  /** SQL: a present, fitting cell as `type` (the column itself when it is held as that type). */
  typedCell: string;
  /** SQL: the cell as cross-variable rules see it: missing and misfits as null, declared types applied. */
  ruleValue: string;
}

/** One plan per column of the table, in table order. */
export function planColumns(columns: readonly ColumnInfo[], codebook: Codebook, params: Params): ColumnPlan[] {
  return columns.map((column) => {
    const field = codebook.fields.find((f) => f.name === column.name);
    const type: ValueType = field?.type ?? 'string';
    const c = ident(column.name);
    const text = textSql(c, column.type);
    const codes = field?.missingValues ?? codebook.missingValues;
    const missing = (v: string) => (codes.length ? `(${v} IS NULL OR list_contains(${params.listSql(codes)}, ${v}))` : `(${v} IS NULL)`);
    // A column already held as its declared type (clean data, Parquet) fits by construction.
    const native = valueTypeOf(column.type) === type && (type !== 'string' || column.type === 'VARCHAR');
    const fits = (v: string) => (native ? 'true' : fitsTypeSql(v, type));
    const typed = (v: string) => (type === 'string' ? v : castTextSql(v, type));
    const typedCell = native ? c : typed(text);
    // A rule's filter is evaluated with this expression written into it wherever the column appears
    // (twice in `d IS NULL OR d >= e`), so it casts once rather than testing the fit and casting again.
    const ruleValue = field?.type
      ? `CASE WHEN ${missing(text)} THEN NULL ELSE ${native ? c : fittingValueSql(text, type)} END`
      : `CASE WHEN ${missing(text)} THEN NULL ELSE ${c} END`;
    return { name: column.name, sqlType: column.type, field, type, text, missing, fits, typed, typedCell, ruleValue };
  });
}

/** What every check needs while its SQL is composed. */
export interface CheckContext {
  session: Session;
  codebook: Codebook;
  params: Params;
  /** SQL for the checked table with its helper columns (see HELPER in checks.ts). */
  numbered: string;
  /** The helper columns of `numbered` as SQL over the checked table under `alias`, for pieces that filter rows first. */
  helpers(alias: string): string[];
  /** The checked table's name in the session. */
  table: string;
  /** How many key columns the numbered table carries for sorting. */
  sortCount: number;
  plans: readonly ColumnPlan[];
  /**
   * The values (one SQL expression per column) that more than one row of the table holds among rows
   * where `where` is true, with how many rows hold each: a relation with columns HELPER.text(i) and
   * HELPER.count. Asked twice for the same values and condition (a primary key that is also a unique
   * field), the rows are grouped once.
   */
  repeated(values: readonly string[], where: string): string;
}
