import { randomBytes } from 'node:crypto';
import { ErrataError } from '../errors.js';
import type { Session } from './session.js';
import { literal } from './sql.js';

/**
 * Correction files come from pull requests, so their expressions are untrusted. An expression must
 * parse as exactly one scalar expression: no statements, no subqueries, no table functions (file
 * readers), no settings. Checked by wrapping it with a random marker and asking DuckDB's own parser
 * for the tree; anything that escapes the wrapper changes the tree's shape and is refused. Each function
 * named in the tree must be a scalar function in DuckDB's catalogue (not an aggregate, a table function
 * or a setting) and not one that reaches outside the row. What passes still runs in a locked-down
 * session under a time limit (session.ts).
 */
export async function assertSafeExpression(session: Session, expression: string, where: { file: string; line: number; what: string }): Promise<void> {
  const refuse = (why: string) =>
    new ErrataError('EXPRESSION_FORBIDDEN', `${where.what} "${abbreviate(expression)}" is not allowed: ${why}`, {
      hint: 'Write one SQL expression over the row\'s columns, e.g. round(height_cm * 2.54, 1) or age > 120.',
      data: { file: where.file, line: where.line },
    });
  if (expression.trim() === '') throw refuse('it is empty');
  if (/;/.test(stripStrings(expression))) throw refuse('it holds ";" (one expression only, no statements)');
  if (/--|\/\*/.test(stripStrings(expression))) throw refuse('it holds a comment');
  const marker = `m_${randomBytes(6).toString('hex')}`;
  const probe = `SELECT (${expression}) AS ${marker} FROM ${marker}`;
  const row = await session.one<{ tree: string }>(`SELECT CAST(json_serialize_sql(${literal(probe)}) AS VARCHAR) AS tree`);
  const tree = JSON.parse(row.tree) as { error: boolean; error_message?: string; statements?: Statement[] };
  if (tree.error) {
    throw new ErrataError('EXPRESSION_INVALID', `${where.what} "${abbreviate(expression)}" is not a valid SQL expression: ${tree.error_message ?? 'parse error'}`, {
      hint: 'Check the parentheses, quotes (text in single quotes) and column names (double quotes if they hold spaces).',
      data: { file: where.file, line: where.line },
    });
  }
  const statement = tree.statements?.[0];
  const node = statement?.node;
  const shapeOk =
    tree.statements?.length === 1 &&
    node?.type === 'SELECT_NODE' &&
    node.select_list?.length === 1 &&
    node.select_list[0].alias === marker &&
    node.from_table?.type === 'BASE_TABLE' &&
    node.from_table.table_name === marker &&
    node.where_clause === null &&
    (node.group_expressions?.length ?? 0) === 0 &&
    node.having === null &&
    (node.modifiers?.length ?? 0) === 0 &&
    (node.cte_map?.map?.length ?? 0) === 0;
  if (!shapeOk) throw refuse('it is not a single expression');
  const problem = findForbidden(node.select_list?.[0], await functionKinds(session));
  if (problem) throw refuse(problem);
}

/** Function name (lower case) → the kinds DuckDB's catalogue has under that name (scalar, aggregate, table...). */
type FunctionKinds = Map<string, Set<string>>;
const kindsBySession = new WeakMap<Session, Promise<FunctionKinds>>();

function functionKinds(session: Session): Promise<FunctionKinds> {
  let kinds = kindsBySession.get(session);
  if (!kinds) {
    kinds = session.all<{ name: string; kind: string }>(`SELECT DISTINCT lower(function_name) AS name, function_type AS kind FROM duckdb_functions()`).then((rows) => {
      const map: FunctionKinds = new Map();
      for (const { name, kind } of rows) {
        if (!map.has(name)) map.set(name, new Set());
        map.get(name)!.add(kind);
      }
      return map;
    });
    kindsBySession.set(session, kinds);
  }
  return kinds;
}

interface Statement {
  node: {
    type: string;
    select_list?: Array<Record<string, unknown> & { alias?: string }>;
    from_table?: { type: string; table_name?: string };
    where_clause: unknown;
    group_expressions?: unknown[];
    having: unknown;
    modifiers?: unknown[];
    cte_map?: { map?: unknown[] };
  };
}

/**
 * Functions that reach outside the row (files, settings, the catalogue, the environment) or whose value
 * changes from run to run (clock, random numbers), which would make a rebuild differ from the build.
 */
const FORBIDDEN_FUNCTION =
  /^(read_|glob$|sniff_csv|parquet_|query$|query_table|current_|getenv|setseed$|nextval|currval|duckdb_|pragma_|which_secret|load_|install_|system$|export_|import_|random$|uuid|gen_random_uuid$|now$|today$|get_current_|transaction_timestamp$|statement_timestamp$|localtime|localtimestamp|getvariable$|txid_|uuidv|json_deserialize_sql$|enable_|disable_|checkpoint$|force_checkpoint$)/i;

const CLOCK_KEYWORD = /^(current_date|current_time|current_timestamp|localtime|localtimestamp|current_user|current_role|session_user)$/i;

function findForbidden(node: unknown, kinds: FunctionKinds): string | null {
  if (Array.isArray(node)) {
    for (const item of node) {
      const found = findForbidden(item, kinds);
      if (found) return found;
    }
    return null;
  }
  if (!node || typeof node !== 'object') return null;
  const record = node as Record<string, unknown>;
  if (record.class === 'SUBQUERY' || record.type === 'SUBQUERY') return 'subqueries are not allowed';
  if (record.class === 'WINDOW') return 'window functions are not allowed (a correction works row by row)';
  if (record.class === 'FUNCTION' && typeof record.function_name === 'string') {
    const name = record.function_name;
    if (FORBIDDEN_FUNCTION.test(name)) return `the function ${name}() reaches outside the table`;
    // Only functions that compute one value from one row's values: an aggregate or a table function
    // (a file reader, a generator of rows) has no place in a row-by-row correction.
    const found = kinds.get(name.toLowerCase());
    if (found && !found.has('scalar') && !found.has('macro')) {
      return found.has('aggregate') ? `${name}() is an aggregate; a correction works row by row` : `${name}() is not a scalar function`;
    }
  }
  if (record.class === 'COLUMN_REF' && Array.isArray(record.column_names) && record.column_names.length > 1) {
    return 'qualified names (table.column) are not allowed; name the column alone';
  }
  // SQL's clock keywords parse as bare names and only become functions when bound.
  if (record.class === 'COLUMN_REF' && Array.isArray(record.column_names) && CLOCK_KEYWORD.test(String(record.column_names[0]))) {
    return `${String(record.column_names[0])} changes from run to run, so a rebuild would differ`;
  }
  for (const value of Object.values(record)) {
    const found = findForbidden(value, kinds);
    if (found) return found;
  }
  return null;
}

/** The expression with quoted strings blanked, so a ";" inside 'text' is not mistaken for a statement end. */
function stripStrings(expression: string): string {
  return expression.replace(/'(?:[^']|'')*'/g, "''").replace(/"(?:[^"]|"")*"/g, '""');
}

function abbreviate(text: string): string {
  return text.length > 60 ? `${text.slice(0, 57)}...` : text;
}
