import { ErrataError } from '../errors.js';
import { keyExpression } from '../engine/keys.js';
import { columnsOf } from '../engine/load-table.js';
import type { Session } from '../engine/session.js';
import { ident } from '../engine/sql.js';
import type { Codebook } from '../project/codebook.js';
import { HELPER, type RowCheck, type ValueCheck } from './checks.js';
import { Params, planColumns, type CheckContext, type ColumnPlan } from './column-plan.js';
import { fieldChecks } from './field-checks.js';
import { ruleCheck } from './rule-checks.js';
import type { Discrepancy } from './types.js';

export interface CheckTableOptions {
  /** The DuckDB table to check, already loaded. */
  table: string;
  /** Key columns naming each row; empty: rows are named "row N", N counting data rows from 1. */
  key: readonly string[];
  codebook: Codebook;
  /** The loader has already made sure every row has a key and no two rows share one. */
  keyChecked?: boolean;
}

export interface TableCheckResult {
  rows: number;
  discrepancies: Discrepancy[];
}

/**
 * Every way the table breaks its codebook, as discrepancies. All checks are SQL, composed into one
 * UNION ALL query over the table, so the work is DuckDB's and scales with it. Run it only after the
 * session is locked down: rules are SQL from the codebook.
 *
 * Discrepancies come in a stable order: columns missing or undescribed, then key problems, then each
 * field's constraints in codebook order (type, required, unique, minimum, maximum, minLength,
 * maxLength, pattern, enum), then the rules in codebook order; rows by key within each check.
 *
 * @example
 *   const { discrepancies } = await checkTable(session, { table: 'clean_visits', key: ['pid'], codebook });
 */
export async function checkTable(session: Session, options: CheckTableOptions): Promise<TableCheckResult> {
  const { table, key, codebook } = options;
  const columns = await columnsOf(session, table);
  for (const k of key) {
    if (!columns.some((c) => c.name === k)) {
      throw new ErrataError('KEY_COLUMN_MISSING', `the key column "${k}" is not in the table`, {
        hint: `Its columns are: ${columns.slice(0, 12).map((c) => c.name).join(', ')}${columns.length > 12 ? ', ...' : ''}.`,
        data: { column: k },
      });
    }
  }
  const params = new Params();
  const plans = planColumns(columns, codebook, params);
  const sorts = sortExpressions(key, plans);
  const helpers = (alias: string) => helperColumns(key, sorts, alias);
  const shared = new Map<string, string>();
  const repeated = (values: readonly string[], where: string) => {
    const sql = `(SELECT ${values.map((v, i) => `${v} AS ${ident(HELPER.text(i))}`).join(', ')}, count(*) AS ${ident(HELPER.count)}
      FROM ${ident(table)} WHERE ${where} GROUP BY ALL HAVING count(*) > 1)`;
    if (!shared.has(sql)) shared.set(sql, ident(`${HELPER.repeated}${shared.size}`));
    return shared.get(sql) as string;
  };
  const context: CheckContext = { session, codebook, params, numbered: `(SELECT ${helpers('').join(', ')}, * FROM ${ident(table)})`, helpers, table, sortCount: sorts.length, plans, repeated };

  // Every check gets its place in this list; the query tags each discrepancy with that place.
  const items: Array<ValueCheck | RowCheck | Discrepancy> = [...columnPresence(codebook, plans)];
  const pieces: string[] = [];
  const place = (check: ValueCheck | RowCheck) => items.push(check) - 1;
  const keys = options.keyChecked ? keysToCheck([], codebook.primaryKey, key) : keysToCheck(key, codebook.primaryKey, []);
  for (const keyColumns of keys) {
    for (const check of keyChecks(context, keyColumns)) {
      if ('kind' in check) pieces.push(rowCheckSql(context, check, place(check)));
      else items.push(check);
    }
  }
  for (const field of codebook.fields) {
    const plan = plans.find((p) => p.name === field.name);
    if (!plan) continue;
    const checks = await fieldChecks(context, plan);
    const valueChecks: Array<{ check: ValueCheck; g: number }> = [];
    for (const check of checks) {
      if (check.kind === 'value') valueChecks.push({ check, g: place(check) });
      else pieces.push(rowCheckSql(context, check, place(check)));
    }
    if (valueChecks.length) pieces.push(nearlyUnique(plan, key, codebook) ? rowValueChecksSql(context, plan, valueChecks) : valueChecksSql(context, plan, valueChecks));
  }
  for (const rule of codebook.rules) {
    const check = await ruleCheck(context, rule);
    if ('kind' in check) pieces.push(rowCheckSql(context, check, place(check)));
    else items.push(check);
  }

  const found = await runPieces(context, pieces, shared);
  const discrepancies: Discrepancy[] = [];
  items.forEach((item, g) => {
    if (!('kind' in item)) {
      discrepancies.push(item);
      return;
    }
    for (const row of found.get(g) ?? []) {
      discrepancies.push({ key: row.k, column: item.column, value: row.v, rule: item.rule, severity: item.severity, message: item.message({ value: row.v, count: row.n }) });
    }
  });
  const rows = await session.one<{ n: bigint }>(`SELECT count(*) AS n FROM ${ident(table)}`);
  return { rows: Number(rows.n), discrepancies };
}

/**
 * A row's position, key text and sort keys under helper names, as SQL over the checked table (under
 * `alias` when given). A row without a key value (possible outside a project) is named by its position.
 */
function helperColumns(key: readonly string[], sorts: ReadonlyArray<(alias: string) => string>, alias: string): string[] {
  const a = alias ? `${alias}.` : '';
  const position = `'row ' || CAST(${a}rowid + 1 AS VARCHAR)`;
  const keyText = key.length ? `COALESCE(${keyExpression(key, alias || undefined)}, ${position})` : position;
  return [`${a}rowid AS ${ident(HELPER.row)}`, `${keyText} AS ${ident(HELPER.key)}`, ...sorts.map((sql, i) => `${sql(alias)} AS ${ident(HELPER.sort(i))}`)];
}

/** Rows are listed in key order; keys held as text sort by number first, so 9 comes before 10. */
function sortExpressions(key: readonly string[], plans: readonly ColumnPlan[]): Array<(alias: string) => string> {
  return key.flatMap((k) => {
    const plan = plans.find((p) => p.name === k);
    const column = (alias: string) => (alias ? `${alias}.${ident(k)}` : ident(k));
    return plan?.sqlType === 'VARCHAR' ? [(alias: string) => `CASE WHEN regexp_matches(${column(alias)}, ${MAY_BE_NUMBER}) THEN TRY_CAST(${column(alias)} AS DOUBLE) END`, column] : [column];
  });
}

/**
 * Text DuckDB can read as a double begins, after white space and a sign, with a digit, a point, "inf"
 * or "nan". Testing that first spares the casts that would fail, which cost more than the test: a
 * million keys such as P0087861 took 0.1 s to fail to cast.
 */
export const MAY_BE_NUMBER = `'(?i)^\\s*[-+]?([0-9.]|inf|nan)'`;

/**
 * The Table Schema describes a table's columns: a described column the table lacks is an error, and
 * a column the codebook does not describe is a warning (the codebook is incomplete, not the data).
 */
function columnPresence(codebook: Codebook, plans: readonly ColumnPlan[]): Discrepancy[] {
  const missing = codebook.fields
    .filter((f) => !plans.some((p) => p.name === f.name))
    .map((f): Discrepancy => ({ key: null, column: f.name, value: null, rule: 'field', severity: 'error', message: 'described in the codebook, but the table has no such column' }));
  const undescribed = plans
    .filter((p) => !p.field)
    .map((p): Discrepancy => ({ key: null, column: p.name, value: null, rule: 'field', severity: 'warning', message: 'in the table, but not described in the codebook' }));
  return [...missing, ...undescribed];
}

/** The keys to check, each once, leaving out one the loader has already checked. */
function keysToCheck(key: readonly string[], primaryKey: readonly string[], checked: readonly string[]): string[][] {
  const same = (a: readonly string[], b: readonly string[]) => a.length === b.length && a.every((x, i) => x === b[i]);
  const keys: string[][] = [];
  for (const k of [key, primaryKey]) {
    if (k.length && !same(k, checked) && !keys.some((other) => same(other, k))) keys.push([...k]);
  }
  return keys;
}

/**
 * A primary key must be present in every row and unique across rows (Table Schema `primaryKey`).
 * Key values are compared as text, the way errata names rows everywhere.
 */
function keyChecks(context: CheckContext, columns: readonly string[]): Array<RowCheck | Discrepancy> {
  const plans: ColumnPlan[] = [];
  for (const name of columns) {
    const plan = context.plans.find((p) => p.name === name);
    if (!plan) {
      return [{ key: null, column: name, value: null, rule: 'primaryKey', severity: 'error', message: 'the primary key names this column, but the table has no such column' }];
    }
    plans.push(plan);
  }
  const column = columns.join(', ');
  // Phrased as a unique field's condition is (field-checks.ts), so a key column that is also unique is grouped once.
  const anyMissing = plans.length === 1 ? plans[0].missing(plans[0].text) : `(${plans.map((p) => p.missing(p.text)).join(' OR ')})`;
  const value = plans.length === 1 ? plans[0].text : `CAST(to_json([${plans.map((p) => p.text).join(', ')}]) AS VARCHAR)`;
  const texts = plans.map((p) => p.text);
  const repeated = context.repeated(texts, `NOT ${anyMissing}`);
  const matches = texts.map((t, i) => `${t} = repeated.${ident(HELPER.text(i))}`).join(' AND ');
  return [
    { kind: 'row', rule: 'primaryKey', severity: 'error', column, where: anyMissing, value, message: () => `no value in the key (${column})` },
    {
      kind: 'row',
      rule: 'primaryKey',
      severity: 'error',
      column,
      source: `(SELECT numbered.*, repeated.${ident(HELPER.count)} FROM ${context.numbered} AS numbered JOIN ${repeated} AS repeated ON ${matches})`,
      where: 'true',
      value,
      count: ident(HELPER.count),
      message: ({ count }) => `the key is the same in ${count} rows`,
    },
  ];
}

/** The columns every piece of the query yields, in order: place, key text, value, count, sort keys, row. */
function outputColumns(context: CheckContext, g: string, value: string, count: string, alias = ''): string {
  const a = alias ? `${alias}.` : '';
  return [
    `${g} AS g`,
    `${a}${ident(HELPER.key)} AS k`,
    `CAST(${value} AS VARCHAR) AS v`,
    `CAST(${count} AS BIGINT) AS n`,
    ...Array.from({ length: context.sortCount }, (_, i) => `${a}${ident(HELPER.sort(i))} AS s${i}`),
    `${a}${ident(HELPER.row)} AS r`,
  ].join(',\n  ');
}

function rowCheckSql(context: CheckContext, check: RowCheck, g: number): string {
  return `SELECT ${outputColumns(context, String(g), check.value, check.count ?? 'NULL')}\nFROM ${check.source ?? context.numbered}\nWHERE ${check.where}`;
}

/**
 * All value checks of one column in one piece: the conditions run once per distinct value, giving the
 * offending values with their text and the place of each check they break; only the rows holding them
 * are then joined in and named, so the work per row is one hash lookup.
 */
function valueChecksSql(context: CheckContext, plan: ColumnPlan, checks: Array<{ check: ValueCheck; g: number }>): string {
  const tagged = checks.map(({ check, g }) => `CASE WHEN ${check.condition} THEN ${g} END`);
  const c = ident(plan.name);
  const [raw, text, place] = ['__errata_raw', '__errata_text', '__errata_place'].map(ident);
  const offending = `(SELECT ${raw}, v AS ${text}, g AS ${place} FROM (
      SELECT ${raw}, v, unnest([${tagged.join(', ')}]) AS g
      FROM (SELECT ${c} AS ${raw}, ${plan.text} AS v FROM (SELECT DISTINCT ${c} FROM ${ident(context.table)})))
    WHERE g IS NOT NULL)`;
  const numbered = `(SELECT ${context.helpers('t').join(', ')}, offending.${text}, offending.${place}
      FROM ${ident(context.table)} AS t JOIN ${offending} AS offending ON t.${c} IS NOT DISTINCT FROM offending.${raw})`;
  return `SELECT ${outputColumns(context, `numbered.${place}`, `numbered.${text}`, 'NULL', 'numbered')}
FROM ${numbered} AS numbered`;
}

/**
 * Whether a column's values are meant to differ from row to row: a single-column key, or a field with
 * the unique constraint. Such a column has about as many distinct values as rows, so grouping it first
 * saves no work and costs a grouping and a join (0.8 s of a million-row check, measured).
 */
function nearlyUnique(plan: ColumnPlan, key: readonly string[], codebook: Codebook): boolean {
  const single = (columns: readonly string[]) => columns.length === 1 && columns[0] === plan.name;
  return Boolean(plan.field?.constraints.unique) || single(key) || single(codebook.primaryKey);
}

/**
 * The value checks of one column evaluated on every row, for a column whose values hardly repeat
 * (see nearlyUnique): rows breaking any check are kept first, then tagged with each check they break.
 */
function rowValueChecksSql(context: CheckContext, plan: ColumnPlan, checks: Array<{ check: ValueCheck; g: number }>): string {
  const tagged = checks.map(({ check, g }) => `CASE WHEN ${check.condition} THEN ${g} END`);
  const broken = checks.map(({ check }) => `(${check.condition})`).join(' OR ');
  const [text, place] = ['__errata_text', '__errata_place'].map(ident);
  const numbered = `(SELECT *, v AS ${text}, unnest([${tagged.join(', ')}]) AS ${place}
      FROM (SELECT ${context.helpers('t').join(', ')}, ${plan.text} AS v FROM ${ident(context.table)} AS t)
      WHERE ${broken})`;
  return `SELECT ${outputColumns(context, `numbered.${place}`, `numbered.${text}`, 'NULL', 'numbered')}
FROM ${numbered} AS numbered
WHERE numbered.${place} IS NOT NULL`;
}

interface FoundRow {
  k: string | null;
  v: string | null;
  n: number | null;
}

/** Run every piece as one UNION ALL query; rows grouped by check, each group in key order. */
async function runPieces(context: CheckContext, pieces: readonly string[], shared: ReadonlyMap<string, string>): Promise<Map<number, FoundRow[]>> {
  const found = new Map<number, FoundRow[]>();
  if (pieces.length === 0) return found;
  const sort = Array.from({ length: context.sortCount }, (_, i) => `s${i}`);
  // Relations several pieces read are computed once (MATERIALIZED), not once per reader.
  const common = shared.size ? `WITH ${[...shared].map(([sql, name]) => `${name} AS MATERIALIZED ${sql}`).join(',\n')}\n` : '';
  const sql = `${common}SELECT g, k, v, n FROM (\n${pieces.join('\nUNION ALL\n')}\n)\nORDER BY ${['g', ...sort, 'r'].join(', ')}`;
  const rows = await context.session.all<{ g: number; k: string | null; v: string | null; n: bigint | null }>(sql, context.params.for(sql));
  for (const row of rows) {
    const group = found.get(row.g) ?? [];
    group.push({ k: row.k, v: row.v, n: row.n === null ? null : Number(row.n) });
    found.set(row.g, group);
  }
  return found;
}
