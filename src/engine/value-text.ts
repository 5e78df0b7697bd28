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
