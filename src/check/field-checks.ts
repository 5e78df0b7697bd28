import { ErrataError } from '../errors.js';
import { SQL_TYPE, castTextSql, fitsTypeSql, type ValueType } from '../engine/column-types.js';
import type { Session } from '../engine/session.js';
import { ident } from '../engine/sql.js';
import type { Codebook, CodebookField } from '../project/codebook.js';
import { HELPER, type RowCheck, type ValueCheck } from './checks.js';
import type { CheckContext, ColumnPlan } from './column-plan.js';

const HINT = 'Fix the field in the codebook: constraints follow the Frictionless Table Schema (minimum and maximum for integer, number and date fields; minLength, maxLength and pattern for string fields).';

const RANGE_TYPES: readonly ValueType[] = ['integer', 'number', 'date'];

const TYPE_WORDS: Record<ValueType, string> = {
  string: 'text',
  integer: 'an integer',
  number: 'a number',
  boolean: 'true or false',
  date: 'a date (YYYY-MM-DD)',
};

/**
 * The checks of one described column, in this order: type, required, unique, minimum, maximum,
 * minLength, maxLength, pattern, enum. Each constraint applies only to present values that fit the
 * type: a missing value breaks `required` and nothing else, and a value of the wrong type breaks
 * `type` and nothing else, as in the Table Schema, where a cell is cast before its constraints are
 * tested. Value checks are written over `v`, one distinct text of the column; `unique` compares rows.
 */
export async function fieldChecks(context: CheckContext, plan: ColumnPlan): Promise<Array<ValueCheck | RowCheck>> {
  const { session, codebook, params } = context;
  const field = plan.field as CodebookField;
  await assertConstraintsFit(session, plan, codebook);
  const { constraints } = field;
  const v = 'v';
  const fits = plan.fits(v);
  const present = `NOT ${plan.missing(v)}`;
  const usable = fits === 'true' ? present : `${present} AND ${fits}`;
  const typed = plan.typed(v);
  const check = (rule: string, condition: string, message: ValueCheck['message']): ValueCheck => ({
    kind: 'value',
    rule,
    severity: 'error',
    column: plan.name,
    condition,
    message,
  });
  const checks: Array<ValueCheck | RowCheck> = [];
  if (fits !== 'true') checks.push(check('type', `${present} AND NOT ${fits}`, () => `not ${TYPE_WORDS[plan.type]}`));
  if (constraints.required) {
    checks.push(
      check('required', plan.missing(v), ({ value }) =>
        value === null ? 'no value, but a value is required' : `${JSON.stringify(value)} counts as missing, but a value is required`,
      ),
    );
  }
  if (constraints.unique) checks.push(uniqueCheck(context, plan));
  if (constraints.minimum !== undefined) {
    const bound = String(constraints.minimum);
    checks.push(check('minimum', `${usable} AND ${typed} < ${castTextSql(params.add(bound), plan.type)}`, () => `below the minimum ${bound}`));
  }
  if (constraints.maximum !== undefined) {
    const bound = String(constraints.maximum);
    checks.push(check('maximum', `${usable} AND ${typed} > ${castTextSql(params.add(bound), plan.type)}`, () => `above the maximum ${bound}`));
  }
  if (constraints.minLength !== undefined) {
    const n = constraints.minLength;
    checks.push(check('minLength', `${usable} AND length(${v}) < ${params.add(n)}`, () => `shorter than ${n} character${n === 1 ? '' : 's'}`));
  }
  if (constraints.maxLength !== undefined) {
    const n = constraints.maxLength;
    checks.push(check('maxLength', `${usable} AND length(${v}) > ${params.add(n)}`, () => `longer than ${n} character${n === 1 ? '' : 's'}`));
  }
  if (constraints.pattern !== undefined) {
    const pattern = constraints.pattern;
    // The Table Schema's patterns match the whole value, hence a full match.
    checks.push(check('pattern', `${usable} AND NOT regexp_full_match(${v}, ${params.add(pattern)})`, () => `does not match the pattern ${pattern}`));
  }
  if (constraints.enum !== undefined) {
    const allowed = constraints.enum;
    const list = plan.type === 'string' ? params.listSql(allowed) : params.listSql(allowed, SQL_TYPE[plan.type]);
    const shown = listForMessage(allowed, plan.type === 'string');
    checks.push(check('enum', `${usable} AND NOT list_contains(${list}, ${typed})`, () => `not one of the allowed values: ${shown}`));
  }
  return checks;
}

/**
 * Rows whose value another row also holds, compared as the type's values (so 1.0 and 1 in a number
 * field are the same value). Missing values and misfits take no part, as in the Table Schema.
 */
function uniqueCheck(context: CheckContext, plan: ColumnPlan): RowCheck {
  const fits = plan.fits(plan.text);
  const usable = fits === 'true' ? `NOT ${plan.missing(plan.text)}` : `NOT ${plan.missing(plan.text)} AND ${fits}`;
  const repeated = context.repeated([plan.typedCell], usable);
  return {
    kind: 'row',
    rule: 'unique',
    severity: 'error',
    column: plan.name,
    source: `(SELECT numbered.*, repeated.${ident(HELPER.count)}
      FROM (SELECT *, ${plan.typedCell} AS ${ident(HELPER.value)} FROM ${context.numbered} WHERE ${usable}) AS numbered
      JOIN ${repeated} AS repeated ON numbered.${ident(HELPER.value)} = repeated.${ident(HELPER.text(0))})`,
    where: 'true',
    value: plan.text,
    count: ident(HELPER.count),
    message: ({ count }) => `the same value is in ${count} rows`,
  };
}

function listForMessage(values: readonly string[], quoted: boolean): string {
  const shown = values.slice(0, 12).map((v) => (quoted ? JSON.stringify(v) : v)).join(', ');
  return values.length > 12 ? `${shown}, … (${values.length} in all)` : shown;
}

/**
 * A constraint must make sense for its field's type, and its values must be of that type: a bad
 * codebook is an input error (exit 2), not a discrepancy in the data.
 */
async function assertConstraintsFit(session: Session, plan: ColumnPlan, codebook: Codebook): Promise<void> {
  const field = plan.field as CodebookField;
  const c = field.constraints;
  const refuse = (message: string) => new ErrataError('SCHEMA_INVALID', `field "${field.name}": ${message}`, { hint: HINT, data: { file: codebook.file, line: field.line, column: field.name } });
  const typeName = field.type ?? 'string (no type given)';
  for (const name of ['minimum', 'maximum'] as const) {
    if (c[name] === undefined) continue;
    if (!RANGE_TYPES.includes(plan.type)) throw refuse(`${name} applies to integer, number and date fields, not ${typeName}`);
    if (!(await fitsType(session, String(c[name]), plan.type))) throw refuse(`${name} ${String(c[name])} is not ${TYPE_WORDS[plan.type]}`);
  }
  for (const name of ['minLength', 'maxLength', 'pattern'] as const) {
    if (c[name] !== undefined && plan.type !== 'string') throw refuse(`${name} applies to string fields, not ${typeName}`);
  }
  for (const name of ['minLength', 'maxLength'] as const) {
    const n = c[name];
    if (n !== undefined && !(Number.isInteger(n) && n >= 0)) throw refuse(`${name} must be a whole number of characters, not ${n}`);
  }
  if (c.pattern !== undefined) {
    try {
      await session.allRaw(`SELECT regexp_full_match('', $pattern) AS ok`, { pattern: c.pattern });
    } catch (error) {
      throw refuse(`the pattern ${c.pattern} is not a valid regular expression (${(error as Error).message.split('\n')[0]})`);
    }
  }
  if (c.enum !== undefined && plan.type !== 'string') {
    const misfits = await session.all<{ v: string }>(
      `SELECT v FROM unnest(CAST(CAST($values AS JSON) AS VARCHAR[])) AS u(v) WHERE NOT ${fitsTypeSql('v', plan.type)}`,
      { values: JSON.stringify(c.enum) },
    );
    if (misfits.length) throw refuse(`enum value ${JSON.stringify(misfits[0].v)} is not ${TYPE_WORDS[plan.type]}`);
  }
}

async function fitsType(session: Session, value: string, type: ValueType): Promise<boolean> {
  const row = await session.one<{ ok: boolean }>(`SELECT ${fitsTypeSql('$value', type)} AS ok`, { value });
  return row.ok === true;
}
