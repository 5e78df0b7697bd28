/** Quote an identifier for DuckDB: always, so column names from user data can never break the SQL. */
export function ident(name: string): string {
  return `"${name.replaceAll('"', '""')}"`;
}

/**
 * A string literal. Used only where DuckDB takes no parameter (table-function arguments such as file
 * paths, DDL); everywhere else values travel as prepared-statement parameters.
 */
export function literal(value: string): string {
  return `'${value.replaceAll("'", "''")}'`;
}

export function identList(names: readonly string[]): string {
  return names.map(ident).join(', ');
}
