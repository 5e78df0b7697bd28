import path from 'node:path';
import { buildProject } from '../build/build-project.js';
import type { RawCache } from '../build/load-raw.js';
import { composeEditCorrection, correctionPath, nextCorrectionNumber } from '../corrections/new-correction.js';
import type { Session } from '../engine/session.js';
import { literal } from '../engine/sql.js';
import type { ProjectTree } from '../git/tree.js';
import type { TableConfig } from '../project/config.js';
import { composeNote } from '../project/new-note.js';
import { loadNotes } from '../project/notes.js';
import { loadPeople, type Person } from '../project/people.js';
import { cellValues, columnsByName } from './cell-values.js';
import { DECISIONS, queryId, type Decision, type SheetRow } from './query-sheet.js';

export interface ImportAnswersOptions {
  tree: ProjectTree;
  rows: readonly SheetRow[];
  /** The sheet's file name, quoted in each note's evidence. */
  sheet: string;
  /** Who answered, for rows whose answered_by is blank. */
  answerer?: string;
  /** The date of the answers, for rows whose answered_on is blank (default: `today`). */
  date?: string;
  today: string;
  workDir: string;
  cache?: RawCache;
}

/** A file the import will write, repository-relative. */
export interface PlannedFile {
  file: string;
  text: string;
}

export interface UsedAnswer {
  row: number;
  query: string;
  table: string;
  key: string;
  column: string;
  decision: Decision;
  from: string | null;
  to: string | null;
  approver: string;
  note: string;
  /** The draft correction, or null for `keep` (nothing to change). */
  correction: string | null;
}

export interface RejectedAnswer {
  row: number;
  query: string;
  reason: string;
}

export interface ImportPlan {
  used: UsedAnswer[];
  rejected: RejectedAnswer[];
  /** Rows with no answer at all: they stay open and will be exported again. */
  unanswered: number[];
  files: PlannedFile[];
}

const DATE = /^\d{4}-\d{2}-\d{2}$/;

/**
 * Turn an answered query sheet into approval notes and draft corrections, without writing anything:
 * one note per usable answer (the answerer as approver, their comment as evidence) and, for each
 * answer that states a new value or missing, a correction of one guarded edit citing that note. Each
 * answer is checked against the clean build first: its cell must still exist and hold the value
 * the question showed, the new value must fit the column's type, and the answerer must be someone
 * people.yaml lets approve that column. Rows that fail are returned with the reason, never guessed at.
 *
 * @example
 *   const plan = await planAnswers({ tree, rows: readSheetCsv(file, text), sheet: 'answers.csv', today, workDir });
 */
export async function planAnswers(options: ImportAnswersOptions): Promise<ImportPlan> {
  const plan: ImportPlan = { used: [], rejected: [], unanswered: [], files: [] };
  const reject = (row: SheetRow, reason: string) => plan.rejected.push({ row: row.row, query: row.cells.query, reason });
  const answered: Array<{ row: SheetRow; decision: Decision }> = [];
  for (const row of options.rows) {
    const c = row.cells;
    const decision = c.decision.toLowerCase();
    if (!decision && !c.new_value && !c.comment) {
      plan.unanswered.push(row.row);
      continue;
    }
    if (!decision) reject(row, `no decision: write ${DECISIONS.join(', ')} in the decision column`);
    else if (!(DECISIONS as readonly string[]).includes(decision)) reject(row, `decision "${c.decision}" is not one of ${DECISIONS.join(', ')}`);
    else answered.push({ row, decision: decision as Decision });
  }
  if (answered.length === 0) return plan;

  const build = await buildProject({ tree: options.tree, workDir: options.workDir, cache: options.cache, keepRaw: false });
  try {
    const people = await loadPeople(options.tree);
    const notes = await loadNotes(options.tree);
    const tables = new Map(build.tables.map((t) => [t.config.name, t]));
    const lookups = new Lookups(build.session);
    // Every answered cell's current value, fetched per column in one query rather than row by row.
    for (const { row } of answered) {
      const table = tables.get(row.cells.table);
      if (table) lookups.want(table.cleanTable, table.config, row.cells.column, row.cells.key);
    }
    const firstRowOf = new Map<string, number>();
    const changedIn = new Map<string, number>();
    const nextNumber = new Map<string, number>();
    for (const { row, decision } of answered) {
      const c = row.cells;
      const table = tables.get(c.table);
      if (!table) {
        reject(row, `no table "${c.table}" in errata.yaml`);
        continue;
      }
      const column = (await lookups.columns(table.cleanTable)).get(c.column);
      if (!column) {
        reject(row, `table ${c.table} has no column "${c.column}"`);
        continue;
      }
      const current = await lookups.value(table.cleanTable, column.name, c.key);
      if (current === undefined) {
        reject(row, `no row with key "${c.key}" in table ${c.table}`);
        continue;
      }
      const id = queryId(c.table, c.key, c.column, c.rule);
      if (id !== c.query) {
        reject(row, `the row's table, key, column or rule was edited (its query id would be ${id}); answer only in the columns decision to answered_on`);
        continue;
      }
      if (firstRowOf.has(id)) {
        reject(row, `query ${id} is answered twice in this sheet (first in row ${firstRowOf.get(id)})`);
        continue;
      }
      firstRowOf.set(id, row.row);
      if (notes.has(id)) {
        reject(row, `query ${id} was answered before (notes/${id}.md); notes are never overwritten`);
        continue;
      }
      if ((current ?? '') !== c.value) {
        reject(row, `the cell has changed since the sheet was written: it held ${show(c.value || null)} and now holds ${show(current)}; export a new sheet`);
        continue;
      }
      const approver = c.answered_by || options.answerer;
      const person = approver ? people.find((p) => p.id === approver) : undefined;
      if (!approver) {
        reject(row, 'no answered_by: write the answerer\'s id from people.yaml, or import with --answerer ID');
        continue;
      }
      if (!person) {
        reject(row, `answered_by "${approver}" is not a person in people.yaml`);
        continue;
      }
      const date = c.answered_on || options.date || options.today;
      if (!DATE.test(date) || Number.isNaN(Date.parse(date))) {
        reject(row, `answered_on "${date}" is not a date written YYYY-MM-DD`);
        continue;
      }
      let to: string | null = null;
      if (decision === 'keep' || decision === 'missing') {
        if (c.new_value) {
          reject(row, `decision ${decision} takes no new_value (found ${show(c.new_value)}); use change to give a new value`);
          continue;
        }
        if (decision === 'missing' && current === null) {
          reject(row, 'the value is already missing; choose keep');
          continue;
        }
      } else {
        if (!c.new_value) {
          reject(row, 'decision change needs the new value in new_value');
          continue;
        }
        if (c.new_value === current) {
          reject(row, `new_value ${show(c.new_value)} is the value the cell already holds; choose keep`);
          continue;
        }
        if (!(await lookups.fits(c.new_value, column.type))) {
          reject(row, `new_value ${show(c.new_value)} is not a valid ${typeWord(column.type)} for column ${column.name}`);
          continue;
        }
        to = c.new_value;
      }
      if (decision !== 'keep' && !mayApprove(person, c.table, column.name)) {
        reject(row, `${person.id} may not approve changes to ${c.table}.${column.name} (people.yaml)`);
        continue;
      }
      // Two queries can be about one cell (it breaks two rules); two changes to it would conflict.
      const cell = `${c.table}\u0000${c.key}\u0000${column.name}`;
      if (decision !== 'keep' && changedIn.has(cell)) {
        reject(row, `row ${changedIn.get(cell)} of this sheet already changes this cell; give one answer that changes it`);
        continue;
      }
      if (decision !== 'keep') changedIn.set(cell, row.row);
      const what = decision === 'keep' ? `keep ${show(current)}` : decision === 'missing' ? `${show(current)} becomes missing` : `${show(current)} becomes ${show(to)}`;
      const note = composeNote({
        id,
        approver: person.id,
        role: person.role,
        date,
        approves: `${c.table} ${c.key} ${column.name}: ${what} (query on rule ${c.rule}: ${c.message})`,
        evidence: `${c.comment || '(no comment given)'}\n\nAnswered in query sheet ${path.basename(options.sheet)}, row ${row.row}.`,
      });
      plan.files.push({ file: note.file, text: note.text });
      let correction: string | null = null;
      if (decision !== 'keep') {
        const folder = table.config.corrections;
        const number = nextNumber.get(folder) ?? (await nextCorrectionNumber(options.tree, folder));
        nextNumber.set(folder, number + 1);
        const reason = `Answer to query ${id}: ${c.column} of ${c.key} ${decision === 'missing' ? 'is unknown, set to missing' : `is ${to}`}`;
        correction = correctionPath(folder, number, reason);
        const { text } = composeEditCorrection(correction, {
          reason,
          approval: id,
          cells: [{ key: c.key, keyColumns: table.config.key.length, column: column.name, from: current, to }],
          comment: `Draft from the answer in query sheet ${path.basename(options.sheet)}, row ${row.row}.\nReview it (errata diff HEAD), then commit it with its note ${note.file}.`,
        });
        plan.files.push({ file: correction, text });
      }
      plan.used.push({ row: row.row, query: id, table: c.table, key: c.key, column: column.name, decision, from: current, to, approver: person.id, note: note.file, correction });
    }
  } finally {
    build.session.close();
  }
  plan.rejected.sort((a, b) => a.row - b.row);
  return plan;
}

/** Cell values and column types of the clean tables, looked up once each. */
class Lookups {
  private readonly columnCache = new Map<string, Awaited<ReturnType<typeof columnsByName>>>();
  /** Per relation and column: the table's key and the keys wanted, then the values found. */
  private readonly cells = new Map<string, { table: TableConfig; keys: Set<string>; values?: Map<string, string | null> }>();

  constructor(private readonly session: Session) {}

  async columns(relation: string) {
    let columns = this.columnCache.get(relation);
    if (!columns) this.columnCache.set(relation, (columns = await columnsByName(this.session, relation)));
    return columns;
  }

  /** Note a cell whose value `value` will be asked for. */
  want(relation: string, table: TableConfig, column: string, key: string): void {
    const id = `${relation}\u0000${column}`;
    const entry = this.cells.get(id) ?? { table, keys: new Set<string>() };
    entry.keys.add(key);
    this.cells.set(id, entry);
  }

  /** A wanted cell's text, null when missing, undefined when no row has the key. */
  async value(relation: string, column: string, key: string): Promise<string | null | undefined> {
    const entry = this.cells.get(`${relation}\u0000${column}`)!;
    if (!entry.values) {
      const info = (await this.columns(relation)).get(column)!;
      entry.values = await cellValues(this.session, relation, entry.table.key, info, [...entry.keys]);
    }
    return entry.values.has(key) ? entry.values.get(key)! : undefined;
  }

  async fits(text: string, type: string): Promise<boolean> {
    if (type === 'VARCHAR') return true;
    const row = await this.session.one<{ ok: boolean }>(`SELECT TRY_CAST(${literal(text)} AS ${type}) IS NOT NULL AS ok`);
    return row.ok;
  }
}

function mayApprove(person: Person, table: string, column: string): boolean {
  const authority = person.authority.get(table);
  return authority === 'all' || (authority?.includes(column) ?? false);
}

function show(value: string | null): string {
  return value === null ? '(missing)' : JSON.stringify(value);
}

function typeWord(type: string): string {
  const words: Record<string, string> = { BIGINT: 'whole number', INTEGER: 'whole number', DOUBLE: 'number', BOOLEAN: 'true/false value', DATE: 'date (YYYY-MM-DD)', TIMESTAMP: 'date and time' };
  return words[type] ?? type;
}

