import { ident } from '../engine/sql.js';
import type { ProjectBuild } from '../build/build-project.js';
import type { ApprovalNote } from '../project/notes.js';
import type { Person } from '../project/people.js';
import { auditOf, type Introduced } from './history.js';

/** One line of the audit trail: a correction, its decision and what it changed. */
export interface AuditEntry {
  table: string;
  correction: string;
  file: string;
  reason: string;
  approval: string | null;
  approver: string | null;
  /** The approver's name from people.yaml. */
  approverName: string | null;
  approvedOn: string | null;
  /** Commit that added the file, or null if it is not committed yet. */
  commit: string | null;
  author: string | null;
  date: string | null;
  steps: number;
  cellsChanged: number;
  /** Cells changed per column, columns in name order. */
  cellsByColumn: Record<string, number>;
  rowsDeleted: number;
  columnEvents: Array<{ change: string; column: string; detail: string | null }>;
}

/** The audit trail of every correction of the built tables, in the order they apply. */
export async function auditTrail(
  build: ProjectBuild,
  notes: Map<string, ApprovalNote>,
  origins: Map<string, Introduced>,
  people: Map<string, Person> = new Map(),
): Promise<AuditEntry[]> {
  const entries: AuditEntry[] = [];
  for (const table of build.tables) {
    const counts = await build.session.all<{ correction: string; change: string; column: string | null; n: bigint }>(
      `SELECT "correction", "change", "column", count(*) AS n FROM ${ident(table.lineageTable)}
       WHERE "key" IS NOT NULL GROUP BY ALL ORDER BY ALL`,
    );
    const columnEvents = await build.session.all<{ correction: string; change: string; column: string; old: string | null; new: string | null }>(
      `SELECT "correction", "change", "column", "old", "new" FROM ${ident(table.lineageTable)} WHERE "key" IS NULL ORDER BY "correction", "step"`,
    );
    for (const correction of table.corrections) {
      const audit = auditOf(correction, notes, origins);
      const mine = counts.filter((c) => c.correction === correction.id);
      const cellsByColumn: Record<string, number> = {};
      for (const c of mine.filter((m) => m.change === 'cell')) cellsByColumn[c.column!] = Number(c.n);
      entries.push({
        table: table.config.name,
        correction: correction.id,
        file: correction.file,
        reason: correction.reason,
        approval: correction.approval ?? null,
        approver: audit.note?.approver ?? null,
        approverName: audit.note ? (people.get(audit.note.approver)?.name ?? null) : null,
        approvedOn: audit.note?.date ?? null,
        commit: audit.introduced?.commit ?? null,
        author: audit.introduced?.author ?? null,
        date: audit.introduced?.date ?? null,
        steps: correction.steps.length,
        cellsChanged: Object.values(cellsByColumn).reduce((a, b) => a + b, 0),
        cellsByColumn,
        rowsDeleted: Number(mine.find((m) => m.change === 'row-deleted')?.n ?? 0),
        columnEvents: columnEvents
          .filter((e) => e.correction === correction.id)
          .map((e) => ({ change: e.change, column: e.column, detail: e.change === 'column-renamed' ? e.new : e.change === 'column-added' ? e.new : e.change === 'column-retyped' ? `${e.old} → ${e.new}` : null })),
      });
    }
  }
  return entries;
}
