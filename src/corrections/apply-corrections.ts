import { ErrataError } from '../errors.js';
import { SQL_TYPE, castTextSql, fitsTypeSql, valueTypeOf } from '../engine/column-types.js';
import { assertSafeExpression } from '../engine/expression-guard.js';
import { keyExpression } from '../engine/keys.js';
import { columnsOf, type ColumnInfo } from '../engine/load-table.js';
import type { Params, Session } from '../engine/session.js';
import { ident } from '../engine/sql.js';
import { textSql } from '../engine/value-text.js';
import type { Correction, Step } from './types.js';

/** What a lineage record says happened: to one cell, to a whole row, or to a whole column. */
export type ChangeKind = 'cell' | 'row-deleted' | 'column-added' | 'column-retyped' | 'column-renamed' | 'column-dropped';

/** A guarded edit whose cell no longer holds the value the decision was made on. */
export interface Conflict {
  correction: string;
  file: string;
  line: number;
  step: number;
  key: string;
  column: string;
  expected: string | null;
  found: string | null;
  problem: 'value-changed' | 'row-missing';
}

export interface ApplyOptions {
  /** The table being corrected in place. */
  table: string;
  key: readonly string[];
  /** The lineage table to append to (created by `createLineageTable`). */
  lineage: string;
  onStep?: (event: { correction: string; step: number; steps: number; index: number; total: number }) => void;
}

export const LINEAGE_COLUMNS = ['key', 'column', 'old', 'new', 'correction', 'step', 'change'] as const;

/**
 * Lineage is kept in two temporary tables behind a view of its seven columns (LINEAGE_COLUMNS):
 * `<name>__cells` (key, old, new, entry) holds a row per changed cell, deleted row or column event,
 * and `<name>__entries` says once per step or event which column, correction, step and kind of
 * change an entry is. A million-row build captures some 300,000 cells; writing the four constant
 * columns with each cost 15 ms a step. The view also gives `entry`, the order entries were recorded in.
 * Temporary, because a capture appended to a table in the main catalogue made the next UPDATE of the
 * table being corrected slow to finish (up to 0.4 s where the update itself took 0.03 s).
 */
export async function createLineageTable(session: Session, name: string): Promise<void> {
  const [cells, entries] = [ident(`${name}__cells`), ident(`${name}__entries`)];
  await session.run(`CREATE OR REPLACE TEMP TABLE ${cells} ("key" VARCHAR, "old" VARCHAR, "new" VARCHAR, "entry" INTEGER)`);
  await session.run(`CREATE OR REPLACE TEMP TABLE ${entries} ("entry" INTEGER, "column" VARCHAR, "correction" VARCHAR, "step" INTEGER, "change" VARCHAR)`);
  await session.run(`CREATE OR REPLACE TEMP VIEW ${ident(name)} AS
    SELECT c."key", e."column", c."old", c."new", e."correction", e."step", e."change", c."entry"
    FROM ${cells} AS c JOIN ${entries} AS e USING ("entry")`);
}

/**
 * Apply corrections in order, each step compiled to SQL. Before a step changes anything, the cells it
 * will change are captured into lineage (only where the value really changes, compared null-safely),
 * so lineage is exactly the difference each step makes.
 */
export async function applyCorrections(session: Session, corrections: readonly Correction[], options: ApplyOptions): Promise<Conflict[]> {
  const conflicts: Conflict[] = [];
  const total = corrections.length;
  const entries = { last: 0 };
  const schema: Schema = { columns: null };
  for (const [index, correction] of corrections.entries()) {
    for (const [stepIndex, step] of correction.steps.entries()) {
      options.onStep?.({ correction: correction.id, step: stepIndex + 1, steps: correction.steps.length, index, total });
      const context = new StepContext(session, options, correction, step, stepIndex + 1, entries, schema);
      await context.checkExpressions();
      conflicts.push(...(await applyStep(context)));
    }
  }
  return conflicts;
}

/**
 * The corrected table's columns as last read. Only an ALTER changes them, so steps that alter nothing
 * share one reading (a catalogue lookup before each of 180-odd statements cost about 0.1 s in all).
 */
interface Schema {
  columns: ColumnInfo[] | null;
}

/** Everything one step needs: where it came from, the table's columns, and SQL helpers. */
class StepContext {
  columns: ColumnInfo[] = [];
  constructor(
    readonly session: Session,
    readonly options: ApplyOptions,
    readonly correction: Correction,
    readonly step: Step,
    readonly number: number,
    /** The last lineage entry recorded in this build (see createLineageTable). */
    private readonly entries: { last: number },
    private readonly schema: Schema,
  ) {}

  get table(): string {
    return ident(this.options.table);
  }

  get keyExpr(): string {
    return keyExpression(this.options.key);
  }

  fail(message: string, hint: string, line = this.step.origin.line, cause?: unknown): ErrataError {
    return new ErrataError('CORRECTION_FAILED', `step ${this.number} (${this.step.kind}): ${message}`, {
      hint,
      data: { file: this.correction.file, line, step: this.number },
      cause,
    });
  }

  async loadColumns(): Promise<void> {
    this.schema.columns ??= await columnsOf(this.session, this.options.table);
    this.columns = this.schema.columns;
  }

  column(name: string, line?: number): ColumnInfo {
    const found = this.columns.find((c) => c.name === name);
    if (!found) {
      throw this.fail(
        `there is no column "${name}" at this point`,
        `Columns here: ${this.columns.map((c) => c.name).join(', ')}. An earlier rename or drop may have changed the name.`,
        line,
      );
    }
    return found;
  }

  /** A column a step may change: it must exist and must not be part of the key. */
  changeable(name: string, line?: number): ColumnInfo {
    const info = this.column(name, line);
    if (this.options.key.includes(name)) {
      throw this.fail(`"${name}" is a key column and cannot be changed`, 'Keys identify rows across deliveries; ask for a corrected delivery instead, or delete the row.', line);
    }
    return info;
  }

  assertNew(name: string): void {
    if (this.columns.some((c) => c.name === name)) {
      throw this.fail(`a column "${name}" already exists`, 'Choose a new name, or drop the old column first.');
    }
  }

  async checkExpressions(): Promise<void> {
    const where = { file: this.correction.file, line: this.step.origin.line };
    const check = (expression: string, what: string) => assertSafeExpression(this.session, expression, { ...where, what });
    const step = this.step;
    if ('where' in step && step.where) await check(step.where, 'where');
    if (step.kind === 'set') for (const a of step.assignments) await check(a.expression, `set ${a.column}`);
    if (step.kind === 'derive') for (const d of step.columns) await check(d.expression, `derive ${d.name}`);
  }

  /** A statement of this step failed: name the file and line; a time limit keeps its own code and hint. */
  private failed(error: unknown): ErrataError {
    if (error instanceof ErrataError && error.code === 'TIMEOUT') {
      return new ErrataError('TIMEOUT', `step ${this.number} (${this.step.kind}): ${error.message}`, {
        hint: error.hint,
        data: { ...error.data, file: this.correction.file, line: this.step.origin.line },
        cause: error,
      });
    }
    return this.fail(engineMessage(error), 'Check the expression and the types of the columns it uses (see `errata profile`).', undefined, error);
  }

  /** Run SQL belonging to this step; a failure names the correction file and line. */
  async run(sql: string, params?: Params): Promise<void> {
    if (/^\s*ALTER\b/i.test(sql)) this.schema.columns = null;
    try {
      await this.session.runRaw(sql, params);
    } catch (error) {
      throw this.failed(error);
    }
  }

  async all<T extends Record<string, unknown>>(sql: string, params?: Params): Promise<T[]> {
    try {
      return await this.session.allRaw<T>(sql, params);
    } catch (error) {
      throw this.failed(error);
    }
  }

  /**
   * A new lineage entry for this step: `change` to `column` (null for a whole row). Returns the SQL
   * to insert this entry's rows into the lineage: key, old and new text, then the entry number.
   */
  async newEntry(change: ChangeKind, column: string | null): Promise<{ insert: string; entry: number }> {
    const entry = ++this.entries.last;
    await this.run(`INSERT INTO ${ident(`${this.options.lineage}__entries`)} VALUES ($1, $2, $3, $4, $5)`, [entry, column, this.correction.id, this.number, change]);
    return { insert: `INSERT INTO ${ident(`${this.options.lineage}__cells`)}`, entry };
  }

  /** Record, then apply, `column := newValueSql` on rows matching `condition`. */
  async changeCells(assignments: Array<{ column: ColumnInfo; value: string }>, condition: string, params: Params = []): Promise<void> {
    for (const { column, value } of assignments) {
      const c = ident(column.name);
      const { insert, entry } = await this.newEntry('cell', column.name);
      await this.run(
        `${insert}
         SELECT ${this.keyExpr}, ${textSql(c, column.type)}, ${textSql('"__errata_new"', column.type)}, ${entry}
         FROM (SELECT *, CAST((${value}) AS ${column.type}) AS "__errata_new" FROM ${this.table} WHERE (${condition}))
         WHERE ${c} IS DISTINCT FROM "__errata_new"`,
        params,
      );
    }
    const sets = assignments.map(({ column, value }) => `${ident(column.name)} = CAST((${value}) AS ${column.type})`).join(', ');
    await this.run(`UPDATE ${this.table} SET ${sets} WHERE (${condition})`, params);
  }

  async recordColumnEvent(change: ChangeKind, column: string, before: string | null, after: string | null): Promise<void> {
    const { insert, entry } = await this.newEntry(change, column);
    await this.run(`${insert} VALUES (NULL, $1, $2, $3)`, [before, after, entry]);
  }
}


function engineMessage(error: unknown): string {
  const message = error instanceof Error ? error.message : String(error);
  return message.split('\n')[0].replace(/^[A-Za-z ]+ Error: /, '');
}

async function applyStep(ctx: StepContext): Promise<Conflict[]> {
  await ctx.loadColumns();
  const step = ctx.step;
  switch (step.kind) {
    case 'set': {
      for (const a of step.assignments) await widenForFractions(ctx, ctx.changeable(a.column), a.expression);
      const assignments = step.assignments.map((a) => ({ column: ctx.changeable(a.column), value: a.expression }));
      await ctx.changeCells(assignments, step.where ?? 'true');
      return [];
    }
    case 'edit':
      return applyEdits(ctx, step);
    case 'recode':
      await applyRecode(ctx, step);
      return [];
    case 'missing': {
      for (const name of step.columns) {
        const column = ctx.changeable(name);
        const matches = step.values.map((_, i) => typedValue(`$${i + 1}`, column.type));
        const byValue = matches.length ? `${ident(name)} IN (${matches.join(', ')})` : 'true';
        const condition = `(${byValue}) AND (${step.where ?? 'true'}) AND ${ident(name)} IS NOT NULL`;
        await ctx.changeCells([{ column, value: 'NULL' }], condition, step.values);
      }
      return [];
    }
    case 'convert':
      await applyConvert(ctx, step);
      return [];
    case 'rename':
      for (const { from, to } of step.renames) {
        ctx.changeable(from);
        ctx.assertNew(to);
        await ctx.run(`ALTER TABLE ${ctx.table} RENAME COLUMN ${ident(from)} TO ${ident(to)}`);
        await ctx.recordColumnEvent('column-renamed', from, from, to);
        await ctx.loadColumns();
      }
      return [];
    case 'drop':
      for (const name of step.columns) {
        const column = ctx.changeable(name);
        await ctx.run(`ALTER TABLE ${ctx.table} DROP COLUMN ${ident(name)}`);
        await ctx.recordColumnEvent('column-dropped', name, column.type, null);
      }
      return [];
    case 'delete':
      const deleted = await ctx.newEntry('row-deleted', null);
      await ctx.run(
        `${deleted.insert}
         SELECT ${ctx.keyExpr}, CAST(to_json(r) AS VARCHAR), NULL, ${deleted.entry}
         FROM ${ctx.table} AS r WHERE (${step.where})`,
      );
      await ctx.run(`DELETE FROM ${ctx.table} WHERE (${step.where})`);
      return [];
    case 'derive':
      for (const { name, expression } of step.columns) {
        ctx.assertNew(name);
        const described = await ctx.all<{ column_type: string }>(`DESCRIBE SELECT (${expression}) AS v FROM ${ctx.table}`);
        await ctx.run(`ALTER TABLE ${ctx.table} ADD COLUMN ${ident(name)} ${described[0].column_type}`);
        await ctx.run(`UPDATE ${ctx.table} SET ${ident(name)} = (${expression})`);
        await ctx.recordColumnEvent('column-added', name, null, expression);
        await ctx.loadColumns();
      }
      return [];
  }
}

/**
 * A whole-number column given a fractional expression (inches × 2.54) becomes DOUBLE first, recorded
 * as a column event, rather than silently rounding the new values.
 */
async function widenForFractions(ctx: StepContext, column: ColumnInfo, expression: string): Promise<void> {
  if (valueTypeOf(column.type) !== 'integer') return;
  const described = await ctx.all<{ column_type: string }>(`DESCRIBE SELECT (${expression}) AS v FROM ${ctx.table}`);
  if (valueTypeOf(described[0]?.column_type ?? '') !== 'number') return;
  await ctx.run(`ALTER TABLE ${ctx.table} ALTER ${ident(column.name)} SET DATA TYPE DOUBLE`);
  await ctx.recordColumnEvent('column-retyped', column.name, column.type, 'DOUBLE');
  await ctx.loadColumns();
}

/**
 * Guarded single-cell edits. All edits of the step are matched against the table in one join; an
 * edit whose row is gone or whose cell no longer holds `from` is a conflict and is not applied.
 */
async function applyEdits(ctx: StepContext, step: Extract<Step, { kind: 'edit' }>): Promise<Conflict[]> {
  const seen = new Map<string, number>();
  for (const cell of step.cells) {
    const id = `${cell.key}\u0000${cell.column}`;
    if (seen.has(id)) {
      throw ctx.fail(`the cell (${cell.key}, ${cell.column}) is edited twice in one step (lines ${seen.get(id)} and ${cell.origin.line})`, 'Keep one edit per cell.', cell.origin.line);
    }
    seen.set(id, cell.origin.line);
  }
  const conflicts: Conflict[] = [];
  const byColumn = new Map<string, typeof step.cells>();
  for (const cell of step.cells) byColumn.set(cell.column, [...(byColumn.get(cell.column) ?? []), cell]);
  for (const [name, cells] of byColumn) {
    const column = ctx.changeable(name, cells[0].origin.line);
    const type = column.type;
    const values = cells.map((_, i) => `($${i * 4 + 1}, $${i * 4 + 2}, $${i * 4 + 3}, CAST($${i * 4 + 4} AS INTEGER))`).join(', ');
    const params = cells.flatMap((c) => [c.key, c.from, c.to, c.origin.line]);
    const edits = `(SELECT * FROM (VALUES ${values}) AS e("key", "from", "to", "line"))`;
    const c = ident(name);
    const matched = await ctx.all<{ key: string; from: string | null; to: string | null; line: number; current: string | null; found: boolean; matches: boolean; fits: boolean }>(
      `SELECT e."key", e."from", e."to", e."line",
              ${textSql(`t.${c}`, type)} AS current,
              t."__errata_key" IS NOT NULL AS found,
              (t.${c} IS NOT DISTINCT FROM ${typedValue('e."from"', type)}) AS matches,
              (e."to" IS NULL OR ${typedValue('e."to"', type)} IS NOT NULL) AS fits
       FROM ${edits} AS e
       LEFT JOIN (SELECT ${ctx.keyExpr} AS "__errata_key", ${c} FROM ${ctx.table}) AS t ON t."__errata_key" = e."key"
       ORDER BY e."line"`,
      params,
    );
    const unfit = matched.find((m) => !m.fits);
    if (unfit) {
      throw ctx.fail(`the new value "${unfit.to}" for (${unfit.key}, ${name}) does not fit the column's type ${type}`, 'Give a value of the column\'s type, or convert the column first.', unfit.line);
    }
    for (const m of matched) {
      if (m.found && m.matches) continue;
      conflicts.push({
        correction: ctx.correction.id,
        file: ctx.correction.file,
        line: m.line,
        step: ctx.number,
        key: m.key,
        column: name,
        expected: m.from,
        found: m.found ? m.current : null,
        problem: m.found ? 'value-changed' : 'row-missing',
      });
    }
    const applicable = matched.filter((m) => m.found && m.matches);
    if (applicable.length === 0) continue;
    const appliedValues = applicable.map((_, i) => `($${i * 2 + 1}, $${i * 2 + 2})`).join(', ');
    const appliedParams = applicable.flatMap((m) => [m.key, m.to]);
    const source = `(SELECT * FROM (VALUES ${appliedValues}) AS e("key", "to"))`;
    const edited = await ctx.newEntry('cell', name);
    await ctx.run(
      `${edited.insert}
       SELECT ${keyExpression(ctx.options.key, 't')}, ${textSql(`t.${c}`, type)}, ${textSql(typedValue('e."to"', type), type)}, ${edited.entry}
       FROM ${ctx.table} AS t JOIN ${source} AS e ON ${keyExpression(ctx.options.key, 't')} = e."key"
       WHERE t.${c} IS DISTINCT FROM ${typedValue('e."to"', type)}`,
      appliedParams,
    );
    await ctx.run(
      `UPDATE ${ctx.table} AS t SET ${c} = ${typedValue('e."to"', type)}
       FROM ${source} AS e WHERE ${keyExpression(ctx.options.key, 't')} = e."key"`,
      appliedParams,
    );
  }
  return conflicts;
}

/** A text value read as the column's type (exact text rules for typed columns, the text itself for VARCHAR). */
function typedValue(valueSql: string, sqlType: string): string {
  const type = valueTypeOf(sqlType);
  if (sqlType === 'VARCHAR') return valueSql;
  if (type === 'string') return `TRY_CAST(${valueSql} AS ${sqlType})`;
  return `CASE WHEN ${fitsTypeSql(valueSql, type)} THEN CAST(${castTextSql(valueSql, type)} AS ${sqlType}) END`;
}

async function applyRecode(ctx: StepContext, step: Extract<Step, { kind: 'recode' }>): Promise<void> {
  let column = ctx.changeable(step.column);
  const targets = [...step.map.map((m) => m.to), ...('value' in step.otherwise ? [step.otherwise.value] : [])].filter((v): v is string => v !== null);
  if (column.type !== 'VARCHAR' && targets.length) {
    const params = targets;
    const fit = await ctx.all<{ ok: boolean }>(
      `SELECT bool_and(${typedValue('v', column.type)} IS NOT NULL) AS ok FROM (VALUES ${params.map((_, i) => `($${i + 1})`).join(', ')}) AS x(v)`,
      params,
    );
    if (!fit[0].ok) {
      // The new codes are text (e.g. labels for numeric codes): the column becomes text first.
      await ctx.run(`ALTER TABLE ${ctx.table} ALTER ${ident(column.name)} SET DATA TYPE VARCHAR`);
      await ctx.recordColumnEvent('column-retyped', column.name, column.type, 'VARCHAR');
      await ctx.loadColumns();
      column = ctx.column(step.column);
    }
  }
  const c = ident(column.name);
  const params: (string | null)[] = [];
  const param = (value: string | null) => {
    params.push(value);
    return `$${params.length}`;
  };
  const match = (code: string) => (column.type === 'VARCHAR' ? `${c} = ${param(code)}` : `${c} = ${typedValue(param(code), column.type)}`);
  const whens = step.map.map((m) => `WHEN ${match(m.from)} THEN ${m.to === null ? 'NULL' : typedValue(param(m.to), column.type)}`);
  const otherwise = 'keep' in step.otherwise ? c : 'missing' in step.otherwise ? 'NULL' : typedValue(param(step.otherwise.value), column.type);
  // Missing cells are not values: neither the map nor `else` touches them. With `else: keep` only
  // rows holding a mapped code can change, so only those are visited.
  const expression = `CASE WHEN ${c} IS NULL THEN ${c} ${whens.join(' ')} ELSE ${otherwise} END`;
  const mapped = () => step.map.map((m) => (column.type === 'VARCHAR' ? param(m.from) : typedValue(param(m.from), column.type)));
  const condition = 'keep' in step.otherwise ? `${c} IN (${mapped().join(', ')})` : `${c} IS NOT NULL`;
  await ctx.changeCells([{ column, value: expression }], condition, params);
}

async function applyConvert(ctx: StepContext, step: Extract<Step, { kind: 'convert' }>): Promise<void> {
  const source = ctx.step.kind === 'convert' && step.as === step.column ? ctx.changeable(step.column) : ctx.column(step.column);
  if (step.as !== step.column) ctx.assertNew(step.as);
  if (ctx.options.key.includes(step.as)) ctx.changeable(step.as);
  const c = ident(source.name);
  const target = SQL_TYPE[step.to];
  const fits = source.type === 'VARCHAR' ? fitsTypeSql(c, step.to) : `TRY_CAST(${c} AS ${target}) IS NOT NULL`;
  const convert = source.type === 'VARCHAR' ? castTextSql(c, step.to) : `CAST(${c} AS ${target})`;
  const failing = `${c} IS NOT NULL AND NOT (${fits})`;
  const failures = await ctx.all<{ key: string; value: string; total: bigint }>(
    `SELECT ${ctx.keyExpr} AS key, ${textSql(c, source.type)} AS value, count(*) OVER () AS total
     FROM ${ctx.table} WHERE ${failing} ORDER BY ${ctx.options.key.map(ident).join(', ')} LIMIT 5`,
  );
  if (failures.length && step.invalid === 'error') {
    const total = Number(failures[0].total);
    const examples = failures.map((f) => `${f.key}: "${f.value}"`).join(', ');
    throw new ErrataError('CONVERSION_FAILED', `step ${ctx.number} (convert): ${total} value${total > 1 ? 's' : ''} of "${source.name}" cannot become ${step.to}: ${examples}${total > 5 ? ', ...' : ''}`, {
      hint: 'Fix those cells first with an edit or a missing step, or add `invalid: missing` to record them as missing on purpose.',
      data: { file: ctx.correction.file, line: step.origin.line, column: source.name, values: failures.map((f) => f.value) },
    });
  }
  const converted = `CASE WHEN ${failing} THEN NULL ELSE ${convert} END`;
  if (failures.length) {
    const invalid = await ctx.newEntry('cell', step.as);
    await ctx.run(
      `${invalid.insert}
       SELECT ${ctx.keyExpr}, ${textSql(c, source.type)}, NULL, ${invalid.entry}
       FROM ${ctx.table} WHERE ${failing}`,
    );
  }
  if (step.as === step.column) {
    await ctx.run(`ALTER TABLE ${ctx.table} ALTER ${c} SET DATA TYPE ${target} USING ${converted}`);
    await ctx.recordColumnEvent('column-retyped', step.column, source.type, target);
  } else {
    await ctx.run(`ALTER TABLE ${ctx.table} ADD COLUMN ${ident(step.as)} ${target}`);
    await ctx.run(`UPDATE ${ctx.table} SET ${ident(step.as)} = ${converted}`);
    await ctx.recordColumnEvent('column-added', step.as, step.column, target);
  }
}
