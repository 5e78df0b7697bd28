import path from 'node:path';
import { prepareProject, rawName } from '../build/build-project.js';
import type { RawCache } from '../build/load-raw.js';
import { fitsTypeSql, type ValueType } from '../engine/column-types.js';
import { columnsOf, type ColumnInfo } from '../engine/load-table.js';
import { Session } from '../engine/session.js';
import { ident } from '../engine/sql.js';
import { textSql } from '../engine/value-text.js';
import type { ProjectTree } from '../git/tree.js';
import { parseCodebook } from '../project/codebook.js';

/**
 * A text column gets an `enum` when it holds at most this many distinct values and, on average,
 * each value occurs at least twice (so identifiers and free text are left alone).
 */
export const ENUM_MAX_VALUES = 10;

/** Share of present values that must fit a type for the draft to propose it despite the rest. */
const MOSTLY = 0.9;

const DRAFT_TYPES: Exclude<ValueType, 'string'>[] = ['integer', 'number', 'boolean', 'date'];

/**
 * Spellings of "no value" that data exports commonly use, compared case-insensitively and trimmed.
 * "none" is left out on purpose: in a count it usually means zero.
 */
const MISSING_WORDS = ['na', 'n/a', 'n.a.', 'nan', 'null', '.', '-', '--', '?', 'missing', 'unknown', '#n/a', 'not available', 'not applicable'];

/**
 * Numbers often used as missing-value codes: 88, 99, 999, 98, 997 and the like, and -1, -8, -9,
 * -99. One counts as a likely code only when it stands apart from the other values of its column.
 */
const SENTINEL_NUMBER = `'-?(9{2,}|8{2,}|9+[78])|-[189]'`;

export interface DraftCodebookOptions {
  tree: ProjectTree;
  table: string;
  /** Where DuckDB may spill; the only folder SQL can touch once the delivery is loaded. */
  workDir: string;
  cache?: RawCache;
}

export interface CodebookDraft {
  table: string;
  /** Where errata.yaml says the table's codebook lives. */
  file: string;
  /** The codebook as YAML, comments included. */
  text: string;
}

interface ColumnFacts {
  name: string;
  rows: number;
  /** Empty cells and empty strings: missing under the draft's missingValues [""]. */
  missing: number;
  distinct: number;
  fits: Record<Exclude<ValueType, 'string'>, number>;
  leadingZeroCodes: number;
  /** Present values that spell "missing" in words or are only blanks, most frequent first. */
  missingWords: Array<{ value: string; count: number }>;
}

interface FieldDraft {
  name: string;
  type: ValueType;
  comments: string[];
  /** Likely missing-value codes with the number of rows holding each. */
  missingCodes: Array<{ value: string; count: number }>;
  required: boolean;
  enum?: string[];
  minimum?: string;
  maximum?: string;
}

/**
 * Propose a codebook for a table from its raw delivery, for the user to edit: each column's type
 * (from every value), `required` where no value is missing, an `enum` for text columns with few
 * distinct values (see ENUM_MAX_VALUES), the observed minimum and maximum of numbers (marked as
 * observed, not decided), the key from errata.yaml as primaryKey, and missingValues [""] with the
 * likely missing-value codes seen in the data as a commented suggestion. The text always parses
 * with parseCodebook.
 *
 * @example
 *   const draft = await draftCodebook({ tree: new WorkingTree(root), table: 'visits', workDir });
 *   // draft.file === 'codebook/visits.yaml'
 */
export async function draftCodebook(options: DraftCodebookOptions): Promise<CodebookDraft> {
  const session = await Session.open({ spillDir: path.join(options.workDir, 'spill') });
  try {
    const prepared = await prepareProject(session, options.tree, { table: options.table, cache: options.cache });
    await session.lockDown([options.workDir]);
    const { table, inputs } = prepared.tables[0];
    const raw = rawName(table);
    const fields: FieldDraft[] = [];
    let rows = 0;
    for (const column of await columnsOf(session, raw)) {
      const facts = await columnFacts(session, raw, column);
      rows = facts.rows;
      fields.push(await draftField(session, raw, column, facts, table.key));
    }
    const text = codebookYaml({ table: table.name, inputs: inputs.map((i) => i.path), rows, key: table.key, fields });
    // The draft must be a codebook errata reads; a failure here is a bug, not the user's to fix.
    parseCodebook(table.codebook, text);
    return { table: table.name, file: table.codebook, text };
  } finally {
    session.close();
  }
}

/** Counts over the column's distinct values (each weighted by how often it occurs), in one query. */
async function columnFacts(session: Session, table: string, column: ColumnInfo): Promise<ColumnFacts> {
  const present = `(v IS NOT NULL AND v <> '')`;
  const fits = DRAFT_TYPES.map((type) => `COALESCE(sum(k) FILTER (WHERE ${present} AND ${fitsTypeSql('v', type)}), 0) AS ${ident(type)}`);
  const row = await session.one<Record<string, bigint | number>>(`
    WITH vals AS (SELECT ${textSql(ident(column.name), column.type)} AS v, count(*) AS k FROM ${ident(table)} GROUP BY ALL)
    SELECT
      COALESCE(sum(k), 0) AS rows,
      COALESCE(sum(k) FILTER (WHERE NOT ${present}), 0) AS missing,
      count(*) FILTER (WHERE ${present}) AS distinct_values,
      count(*) FILTER (WHERE ${present} AND regexp_full_match(v, '0[0-9]+')) AS leading_zero,
      ${fits.join(',\n      ')}
    FROM vals`);
  const words = await session.all<{ v: string; k: bigint }>(
    `SELECT v, count(*) AS k FROM (SELECT ${textSql(ident(column.name), column.type)} AS v FROM ${ident(table)})
     WHERE v <> '' AND (trim(v) = '' OR list_contains(CAST(CAST($words AS JSON) AS VARCHAR[]), lower(trim(v))))
     GROUP BY v ORDER BY k DESC, v`,
    { words: JSON.stringify(MISSING_WORDS) },
  );
  return {
    name: column.name,
    rows: Number(row.rows),
    missing: Number(row.missing),
    distinct: Number(row.distinct_values),
    fits: { integer: Number(row.integer), number: Number(row.number), boolean: Number(row.boolean), date: Number(row.date) },
    leadingZeroCodes: Number(row.leading_zero),
    missingWords: words.map((w) => ({ value: w.v, count: Number(w.k) })),
  };
}

async function draftField(session: Session, table: string, column: ColumnInfo, facts: ColumnFacts, key: readonly string[]): Promise<FieldDraft> {
  const present = facts.rows - facts.missing;
  const wordCount = facts.missingWords.reduce((sum, w) => sum + w.count, 0);
  const draft: FieldDraft = { name: facts.name, type: 'string', comments: [], missingCodes: [...facts.missingWords], required: false };
  if (present === 0) draft.comments.push('no value in this delivery: the type could not be told');
  else if (facts.leadingZeroCodes > 0) draft.comments.push('codes with leading zeros (such as 007) are text, so this stays a string');
  else {
    // A type every value fits, once the likely missing-value words are set aside; else one most fit.
    const full = DRAFT_TYPES.find((type) => facts.fits[type] > 0 && facts.fits[type] === present - wordCount);
    const mostly = full ?? DRAFT_TYPES.find((type) => facts.fits[type] >= MOSTLY * present);
    if (mostly) {
      draft.type = mostly;
      const misfits = present - wordCount - facts.fits[mostly];
      if (!full && misfits > 0) {
        const examples = await misfitExamples(session, table, column, mostly, facts.missingWords.map((w) => w.value));
        draft.comments.push(`${misfits} row${misfits === 1 ? ' holds a value' : 's hold values'} that ${misfits === 1 ? 'is' : 'are'} not ${TYPE_WORDS[mostly]}: ${examples}; correct them or declare them missing`);
      }
    }
  }
  if (draft.type === 'integer' || draft.type === 'number') await addRange(session, table, column, draft);
  const codes = draft.missingCodes.map((c) => `${JSON.stringify(c.value)} (${c.count} row${c.count === 1 ? '' : 's'})`);
  if (codes.length) draft.comments.push(`looks like missing-value codes: ${codes.join(', ')}`);
  draft.required = present > 0 && facts.missing === 0 && draft.missingCodes.length === 0;
  const valuesPresent = present - wordCount;
  const distinctValues = facts.distinct - facts.missingWords.length;
  const coded = distinctValues > 0 && distinctValues <= ENUM_MAX_VALUES && valuesPresent >= 2 * distinctValues;
  if (draft.type === 'string' && coded && !key.includes(facts.name)) {
    const values = await session.all<{ v: string }>(
      `SELECT DISTINCT v FROM (SELECT ${textSql(ident(column.name), column.type)} AS v FROM ${ident(table)})
       WHERE v <> '' AND NOT list_contains(CAST(CAST($codes AS JSON) AS VARCHAR[]), v) ORDER BY v`,
      { codes: JSON.stringify(draft.missingCodes.map((c) => c.value)) },
    );
    if (values.length) draft.enum = values.map((r) => r.v);
  }
  return draft;
}

const TYPE_WORDS: Record<ValueType, string> = { string: 'text', integer: 'integers', number: 'numbers', boolean: 'true or false', date: 'dates (YYYY-MM-DD)' };

async function misfitExamples(session: Session, table: string, column: ColumnInfo, type: ValueType, words: readonly string[]): Promise<string> {
  const rows = await session.all<{ v: string; k: bigint }>(
    `SELECT v, count(*) AS k FROM (SELECT ${textSql(ident(column.name), column.type)} AS v FROM ${ident(table)})
     WHERE v <> '' AND NOT ${fitsTypeSql('v', type)} AND NOT list_contains(CAST(CAST($words AS JSON) AS VARCHAR[]), v)
     GROUP BY v ORDER BY k DESC, v LIMIT 5`,
    { words: JSON.stringify(words) },
  );
  return rows.map((r) => `${JSON.stringify(r.v)} (${Number(r.k)})`).join(', ');
}

/**
 * The observed minimum and maximum, leaving out numbers such as 999 or -9 that lie outside the range
 * of the other values: those are proposed as missing-value codes instead.
 */
async function addRange(session: Session, table: string, column: ColumnInfo, draft: FieldDraft): Promise<void> {
  const fits = fitsTypeSql('v', draft.type);
  const row = await session.one<{
    candidates: Array<{ v: string; k: bigint; x: number }> | null;
    lo: number | null;
    hi: number | null;
    lo_text: string | null;
    hi_text: string | null;
    all_lo: string | null;
    all_hi: string | null;
  }>(`
    WITH vals AS (
      SELECT v, count(*) AS k, TRY_CAST(v AS DOUBLE) AS x, regexp_full_match(v, ${SENTINEL_NUMBER}) AS candidate
      FROM (SELECT ${textSql(ident(column.name), column.type)} AS v FROM ${ident(table)})
      WHERE v <> '' AND ${fits}
      GROUP BY v)
    SELECT
      list({'v': v, 'k': k, 'x': x} ORDER BY x) FILTER (WHERE candidate) AS candidates,
      min(x) FILTER (WHERE NOT candidate) AS lo,
      max(x) FILTER (WHERE NOT candidate) AS hi,
      arg_min(v, x) FILTER (WHERE NOT candidate) AS lo_text,
      arg_max(v, x) FILTER (WHERE NOT candidate) AS hi_text,
      arg_min(v, x) AS all_lo,
      arg_max(v, x) AS all_hi
    FROM vals`);
  if (row.all_lo === null) return;
  const apart = row.lo === null || row.hi === null ? [] : (row.candidates ?? []).filter((c) => c.x < row.lo! || c.x > row.hi!);
  if (apart.length === 0) {
    draft.minimum = row.all_lo;
    draft.maximum = row.all_hi ?? undefined;
    return;
  }
  draft.minimum = row.lo_text ?? undefined;
  draft.maximum = row.hi_text ?? undefined;
  for (const c of apart) draft.missingCodes.push({ value: c.v, count: Number(c.k) });
  const listed = apart.map((c) => c.v).join(', ');
  draft.comments.push(`${listed} ${apart.length === 1 ? 'lies' : 'lie'} outside the range of the other values, ${row.lo_text} to ${row.hi_text}: a missing-value code?`);
}

/** The codebook text: comments explain what was observed and what the user must decide. */
function codebookYaml(d: { table: string; inputs: string[]; rows: number; key: readonly string[]; fields: FieldDraft[] }): string {
  const q = (text: string) => JSON.stringify(text);
  const lines = [
    `# Codebook for the table ${d.table}, drafted by \`errata codebook draft\` from`,
    ...d.inputs.map((input) => `#   ${input} (${d.rows} row${d.rows === 1 ? '' : 's'})`),
    '# Everything below describes the delivery as it is, not what the study allows: keep what is true of',
    '# each variable, set ranges and codes from the protocol, and add titles and labels.',
    '# Keys follow the Frictionless Table Schema: type, constraints (required, unique, minimum, maximum,',
    '# minLength, maxLength, pattern, enum) and missingValues, codebook-wide or per field.',
    `# Text columns with at most ${ENUM_MAX_VALUES} distinct values, each seen twice on average, got an enum.`,
  ];
  if (d.key.length) lines.push(`primaryKey: ${d.key.length === 1 ? q(d.key[0]) : `[${d.key.map(q).join(', ')}]`}`);
  lines.push('missingValues: [""]');
  const allCodes = [...new Set(d.fields.flatMap((f) => f.missingCodes.map((c) => c.value)))];
  if (allCodes.length) {
    lines.push('# Values in this delivery that look like missing-value codes (see the fields below). If they mean');
    lines.push('# "no value" everywhere, use this line instead of the one above:');
    lines.push(`# missingValues: [${['""', ...allCodes.map(q)].join(', ')}]`);
  }
  lines.push('fields:');
  for (const f of d.fields) {
    lines.push(`  - name: ${q(f.name)}`);
    lines.push(`    type: ${f.type}`);
    for (const comment of f.comments) lines.push(`    # ${comment}`);
    if (f.missingCodes.length) lines.push(`    # missingValues: [${['""', ...f.missingCodes.map((c) => q(c.value))].join(', ')}]`);
    const constraints: string[] = [];
    if (f.required) constraints.push('required: true');
    if (f.minimum !== undefined) constraints.push(`minimum: ${f.minimum}   # observed in this delivery, not a decided limit`);
    if (f.maximum !== undefined) constraints.push(`maximum: ${f.maximum}   # observed in this delivery, not a decided limit`);
    if (f.enum) constraints.push(`enum: [${f.enum.map(q).join(', ')}]`);
    if (constraints.length) {
      lines.push('    constraints:');
      for (const c of constraints) lines.push(`      ${c}`);
    }
  }
  lines.push(
    '# Cross-variable rules: SQL conditions true for every valid row, for example',
    '# rules:',
    '#   - name: diastolic-below-systolic',
    '#     assert: "diastolic_bp < systolic_bp"',
    '#     message: Diastolic pressure must be below systolic pressure',
    '#     severity: error',
  );
  return lines.join('\n') + '\n';
}
