import { ErrataError } from '../errors.js';
import { keyExpression, keyText } from '../engine/keys.js';
import { ident } from '../engine/sql.js';
import { columnNames } from '../engine/load-table.js';
import { textSql } from '../engine/value-text.js';
import type { ProjectBuild, TableBuild } from '../build/build-project.js';
import type { ChangeKind } from '../corrections/apply-corrections.js';
import type { ApprovalNote } from '../project/notes.js';
import type { Person } from '../project/people.js';
import { findTable } from '../project/config.js';
import { auditOf, type Introduced } from './history.js';

export interface CellEvent {
  correction: string;
  file: string;
  step: number;
  stepKind: string;
  line: number;
  change: ChangeKind;
  /** The column's name when the step ran (it may be renamed later). */
  column: string | null;
  old: string | null;
  new: string | null;
  reason: string;
  approval: string | null;
  note: ApprovalNote | null;
  /** The approver's name from people.yaml (the note names them by id). */
  approverName: string | null;
  introduced: Introduced | null;
}

export interface CellHistory {
  table: string;
  key: string;
  column: string;
  /** The raw delivery's text for the cell; null when missing there or the column is not raw. */
  raw: { value: string | null; column: string | null; rowFound: boolean };
  clean: { value: string | null; rowFound: boolean; columnFound: boolean };
  events: CellEvent[];
}

/**
 * Why a clean cell holds its value: the raw text, then every correction step that touched the cell,
 * its row or its column, in the order they applied, with reason and approval.
 */
export async function explainCell(
  build: ProjectBuild,
  request: { table: string; key: string[]; column: string },
  notes: Map<string, ApprovalNote>,
  origins: Map<string, Introduced>,
  people: Map<string, Person> = new Map(),
): Promise<CellHistory> {
  const config = findTable(build.config, request.table);
  const table = build.tables.find((t) => t.config.name === config.name) as TableBuild;
  if (request.key.length !== config.key.length) {
    throw new ErrataError('USAGE', `table ${config.name} has a key of ${config.key.length} column${config.key.length > 1 ? 's' : ''} (${config.key.join(', ')}); ${request.key.length} value${request.key.length > 1 ? 's were' : ' was'} given`, {
      hint: 'Give one value per key column, separated by commas, e.g. errata why visits A17,3 weight_kg.',
    });
  }
  const key = keyText(request.key);
  const { session } = build;
  // Column events sort first within a step, so the walk below meets a convert's cells before the
  // event that created their column.
  const events = await session.all<{ correction: string; step: number; change: ChangeKind; column: string | null; old: string | null; new: string | null }>(
    `SELECT "correction", "step", "change", "column", "old", "new" FROM ${ident(table.lineageTable)}
     WHERE "key" = $1 OR "key" IS NULL ORDER BY "correction", "step", "key" IS NOT NULL`,
    [key],
  );
  // Walk backwards from the column asked about, following renames and conversions to the column it
  // came from; a derived column has no raw value.
  let rawColumn: string | null = request.column;
  const relevant: typeof events = [];
  for (const e of [...events].reverse()) {
    if (e.change === 'row-deleted') relevant.push(e);
    else if (rawColumn === null || e.column === null) continue;
    else if (e.change === 'column-renamed' && e.new === rawColumn) {
      relevant.push(e);
      rawColumn = e.old;
    } else if (e.change === 'column-added' && e.column === rawColumn) {
      relevant.push(e);
      rawColumn = e.old !== null && !isDerived(table, e) ? e.old : null;
    } else if (e.column === rawColumn) relevant.push(e);
  }
  relevant.reverse();

  if (!table.rawTable) throw new Error('explainCell needs a build that kept the raw tables (keepRaw)');
  const rawTable = table.rawTable;
  if (rawColumn && !(await columnNames(session, rawTable)).includes(rawColumn)) rawColumn = null;
  const rawRow = await session.all<{ value: string | null }>(
    `SELECT ${rawColumn ? `CAST(${ident(rawColumn)} AS VARCHAR)` : 'NULL'} AS value FROM ${ident(rawTable)} WHERE ${keyExpression(config.key)} = $1`,
    [key],
  );
  const cleanColumn = table.columns.find((c) => c.name === request.column);
  const columnFound = cleanColumn !== undefined;
  const cleanRow = await session.all<{ value: string | null }>(
    `SELECT ${cleanColumn ? textSql(ident(cleanColumn.name), cleanColumn.type) : 'NULL'} AS value FROM ${ident(table.cleanTable)} WHERE ${keyExpression(config.key)} = $1`,
    [key],
  );
  if (rawRow.length === 0 && cleanRow.length === 0) {
    throw new ErrataError('CELL_UNKNOWN', `no row with key ${key} in table ${config.name}, raw or clean`, {
      hint: `The key is ${config.key.join(', ')}; check the value (keys are matched as text, e.g. 0042 is not 42).`,
      data: { key },
    });
  }
  if (!columnFound && !rawColumn && relevant.length === 0) {
    throw new ErrataError('CELL_UNKNOWN', `table ${config.name} has no column "${request.column}"`, {
      hint: `Columns: ${table.columns.map((c) => c.name).join(', ')}.`,
      data: { column: request.column },
    });
  }
  const byId = new Map(table.corrections.map((c) => [c.id, c]));
  return {
    table: config.name,
    key,
    column: request.column,
    raw: { value: rawRow[0]?.value ?? null, column: rawColumn, rowFound: rawRow.length > 0 },
    clean: { value: cleanRow[0]?.value ?? null, rowFound: cleanRow.length > 0, columnFound },
    events: relevant.map((e) => {
      const correction = byId.get(e.correction)!;
      const audit = auditOf(correction, notes, origins);
      const step = correction.steps[e.step - 1];
      return {
        correction: e.correction,
        file: correction.file,
        step: e.step,
        stepKind: step.kind,
        line: step.origin.line,
        change: e.change,
        column: e.column,
        old: e.old,
        new: e.new,
        reason: step.kind === 'delete' ? `${correction.reason} (row deleted: ${step.reason})` : correction.reason,
        approval: correction.approval ?? null,
        note: audit.note ?? null,
        approverName: audit.note ? (people.get(audit.note.approver)?.name ?? null) : null,
        introduced: audit.introduced ?? null,
      };
    }),
  };
}

/** column-added events come from derive (old: null) or convert (old: the source column). */
function isDerived(table: TableBuild, e: { correction: string; step: number }): boolean {
  const correction = table.corrections.find((c) => c.id === e.correction);
  return correction?.steps[e.step - 1]?.kind === 'derive';
}
