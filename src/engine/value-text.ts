import { FORMULA_STARTS } from './formula-guard.js';
/**
 * SQL giving a value's text, the one way errata writes values everywhere (clean CSV, lineage, diffs).
 * Whole DOUBLE values print without ".0", so a delivered 80 in a column of decimals stays 80; other
 * numbers print as the shortest text that reads back to the same value (DuckDB's rendering).
 */
export function textSql(valueSql: string, sqlType: string): string {
  if (sqlType === 'DOUBLE' || sqlType === 'FLOAT' || sqlType === 'REAL') {
    return `CASE WHEN isfinite(${valueSql}) AND ${valueSql} = trunc(${valueSql}) AND abs(${valueSql}) < 1e15
      THEN CAST(CAST(${valueSql} AS BIGINT) AS VARCHAR) ELSE CAST(${valueSql} AS VARCHAR) END`;
  }
  if (sqlType === 'VARCHAR') return valueSql;
  return `CAST(${valueSql} AS VARCHAR)`;
}

/**
 * SQL form of `neutraliseFormula` (formula-guard.ts), for text the CSV writer sends straight from the
 * engine: a cell a spreadsheet would run as a formula gets one leading apostrophe, and so does a cell
 * already beginning with one; numbers such as -99 or +1.5e3 are left alone. The two forms must agree
 * on every value (tests/engine/value-text.test.ts checks them against each other).
 */
export function neutraliseFormulaSql(textSql: string): string {
  return `CASE WHEN ord(${textSql}) IN (${FORMULA_STARTS.map((ch) => ch.codePointAt(0)).join(', ')})
      AND NOT regexp_matches(${textSql}, '^[+-]?([0-9]+\\.?[0-9]*|\\.[0-9]+)([eE][+-]?[0-9]+)?$')
    THEN '''' || ${textSql} ELSE ${textSql} END`;
}
