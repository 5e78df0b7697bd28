import { ErrataError } from '../errors.js';
import { assertSafeExpression } from '../engine/expression-guard.js';
import type { Session } from '../engine/session.js';
import { firstLines } from '../engine/session.js';
import { ident, literal } from '../engine/sql.js';
import type { CodebookRule } from '../project/codebook.js';
import { HELPER, type RowCheck } from './checks.js';
import type { CheckContext, ColumnPlan } from './column-plan.js';
import type { Discrepancy } from './types.js';

const HINT = 'A rule is one SQL condition that is true for a valid row, e.g. diastolic_bp < systolic_bp. Rules see columns with their declared types; a column without a type in the codebook is seen as loaded (text, in a raw CSV delivery).';

/**
 * A cross-variable rule: its expression is evaluated over each row with declared types applied and
 * missing values as null, and a row breaks the rule when the expression is false. As with a SQL CHECK
 * constraint, an expression that is null (it met a missing value) is not a violation: whether a value
 * may be missing is the `required` constraint's business.
 *
 * Rules come from the codebook, which anyone can change in a pull request, so each must pass the
 * same guard as a correction's expressions before it runs.
 */
export async function ruleCheck(context: CheckContext, rule: CodebookRule): Promise<RowCheck | Discrepancy> {
  const { session, codebook, params, plans } = context;
  const where = { file: codebook.file, line: rule.line, what: `rule ${rule.name}` };
  await assertSafeExpression(session, rule.assert, where);
  const names = await referencedColumns(session, rule.assert, where);
  const used: ColumnPlan[] = [];
  for (const name of names) {
    const plan = plans.find((p) => p.name === name) ?? plans.find((p) => p.name.toLowerCase() === name.toLowerCase());
    if (!plan) {
      return { key: null, column: name, value: null, rule: rule.name, severity: rule.severity, message: `cannot be checked: the table has no column ${JSON.stringify(name)}` };
    }
    if (!used.includes(plan)) used.push(plan);
  }
  const source = ruleRelation(context, used);
  const expression = `(${rule.assert})`;
  await assertBoolean(session, `SELECT ${expression} AS ${ident('rule')} FROM ${source}`, params.for(source), rule, codebook.file);
  // The value shown is every column the rule reads, as delivered: "sbp=120, dbp=130".
  const shown = used.map((plan, i) => `${params.add(`${plan.name}=`)} || COALESCE(${ident(HELPER.text(i))}, ${literal('(missing)')})`);
  return {
    kind: 'row',
    rule: rule.name,
    severity: rule.severity,
    column: used.length ? used.map((p) => p.name).join(', ') : null,
    source,
    where: `NOT ${expression}`,
    value: shown.length ? `concat_ws(', ', ${shown.join(', ')})` : 'NULL',
    message: () => rule.message,
  };
}

/** The numbered table as rules see it: each column the rule reads under its own name, typed, missing as null. */
function ruleRelation(context: CheckContext, used: readonly ColumnPlan[]): string {
  const select = [
    ident(HELPER.row),
    ident(HELPER.key),
    ...Array.from({ length: context.sortCount }, (_, i) => ident(HELPER.sort(i))),
    ...used.map((plan, i) => `${plan.text} AS ${ident(HELPER.text(i))}`),
    // Only the columns the rule reads: each typed value costs a pattern match and a cast per row.
    ...used.map((plan) => `${plan.ruleValue} AS ${ident(plan.name)}`),
  ];
  return `(SELECT ${select.join(', ')} FROM ${context.numbered})`;
}

async function assertBoolean(session: Session, sql: string, values: Record<string, string | number>, rule: CodebookRule, file: string): Promise<void> {
  let type: string | undefined;
  try {
    const rows = await session.allRaw<{ column_type: string }>(`DESCRIBE ${sql}`, values);
    type = rows[0]?.column_type;
  } catch (error) {
    throw new ErrataError('SCHEMA_INVALID', `rule ${rule.name} cannot be evaluated: ${firstLines((error as Error).message, 1)}`, {
      hint: HINT,
      data: { file, line: rule.line },
      cause: error,
    });
  }
  if (type !== 'BOOLEAN') {
    throw new ErrataError('SCHEMA_INVALID', `rule ${rule.name} must be true or false for each row, but its expression gives ${type}`, {
      hint: 'Compare values (a < b, x IN (1, 2), y IS NOT NULL) so that the expression is a condition.',
      data: { file, line: rule.line },
    });
  }
}

/** Column names an expression reads, in order of first appearance (names bound by a lambda excepted). */
async function referencedColumns(session: Session, expression: string, where: { file: string; line: number; what: string }): Promise<string[]> {
  const row = await session.one<{ tree: string }>(`SELECT CAST(json_serialize_sql(CAST($sql AS VARCHAR)) AS VARCHAR) AS tree`, {
    sql: `SELECT (${expression}) AS rule_value FROM rule_source`,
  });
  const tree = JSON.parse(row.tree) as { statements?: Array<{ node: { select_list?: unknown[] } }> };
  const names: string[] = [];
  const bound = new Set<string>();
  let parameter = false;
  const visit = (node: unknown, inLambdaParameters = false): void => {
    if (Array.isArray(node)) return node.forEach((item) => visit(item, inLambdaParameters));
    if (!node || typeof node !== 'object') return;
    const record = node as Record<string, unknown>;
    if (record.class === 'PARAMETER') parameter = true;
    if (record.class === 'COLUMN_REF' && Array.isArray(record.column_names)) {
      const name = String(record.column_names[0]);
      if (inLambdaParameters) bound.add(name.toLowerCase());
      else if (!names.includes(name)) names.push(name);
      return;
    }
    if (record.class === 'LAMBDA') {
      visit(record.lhs, true);
      visit(record.expr);
      return;
    }
    for (const value of Object.values(record)) visit(value, inLambdaParameters);
  };
  visit(tree.statements?.[0]?.node.select_list);
  if (parameter) {
    throw new ErrataError('EXPRESSION_FORBIDDEN', `${where.what} holds a query parameter ($name or ?), which a rule cannot be given`, {
      hint: 'Write the value itself in the expression, e.g. age >= 18.',
      data: { file: where.file, line: where.line },
    });
  }
  return names.filter((name) => !bound.has(name.toLowerCase()));
}
