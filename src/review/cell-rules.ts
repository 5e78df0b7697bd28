import type { Session } from '../engine/session.js';
import { ident } from '../engine/sql.js';
import { diffTables } from '../diff/table-diff.js';
import type { TableBuild } from '../build/build-project.js';
import type { Finding } from './types.js';

export interface CellExplanation {
  cellsChanged: number;
  byCorrection: number;
  byDelivery: number;
  findings: Finding[];
}

/**
 * Every clean cell that differs between base and head must be explained: by a correction added (or
 * changed) in the range that touched that cell, row or column, or by a new raw delivery whose value
 * for that cell differs. Whatever is left is a finding.
 */
export async function explainChangedCells(
  session: Session,
  base: TableBuild | undefined,
  head: TableBuild,
  newCorrections: ReadonlySet<string>,
): Promise<CellExplanation> {
  const name = head.config.name;
  const key = head.config.key;
  const baseClean = base?.cleanTable ?? (await emptyLike(session, head.cleanTable));
  const baseRaw = base?.rawTable ?? (await emptyLike(session, head.rawTable!));
  const clean = await diffTables(session, baseClean, head.cleanTable, { key, table: name });
  const raw = await diffTables(session, baseRaw, head.rawTable!, { key, table: name });

  const lineage = ident(head.lineageTable);
  const ids = [...newCorrections];
  const inRange = ids.length ? `"correction" IN (${ids.map((_, i) => `$${i + 1}`).join(', ')})` : 'false';
  const touchedCells = new Set(
    (await session.all<{ k: string }>(`SELECT "key" || chr(0) || "column" AS k FROM ${lineage} WHERE "change" = 'cell' AND ${inRange}`, ids)).map((r) => r.k),
  );
  const touchedColumns = new Set(
    (await session.all<{ c: string }>(`SELECT DISTINCT "column" AS c FROM ${lineage} WHERE "key" IS NULL AND ${inRange}`, ids)).map((r) => r.c),
  );
  const deletedRows = new Set(
    (await session.all<{ k: string }>(`SELECT "key" AS k FROM ${lineage} WHERE "change" = 'row-deleted' AND ${inRange}`, ids)).map((r) => r.k),
  );
  const touchedRows = new Set([...touchedCells].map((k) => k.split('\u0000')[0]));

  // A clean column may carry another name in the raw delivery (renamed by a correction).
  const renames = await session.all<{ old: string; new: string }>(`SELECT "old", "new" FROM ${lineage} WHERE "change" = 'column-renamed' ORDER BY "correction", "step"`);
  const derived = new Set((await session.all<{ c: string }>(`SELECT DISTINCT "column" AS c FROM ${lineage} WHERE "change" = 'column-added'`)).map((r) => r.c));
  const rawNameOf = (column: string) => {
    let current = column;
    for (const r of [...renames].reverse()) if (r.new === current) current = r.old;
    return current;
  };
  const rawCells = new Set(raw.cells.map((c) => `${c.key}\u0000${c.column}`));
  const rawRows = new Set(raw.cells.map((c) => c.key));
  const rawAdded = new Set(raw.addedKeys);
  const rawRemoved = new Set(raw.removedKeys);

  const findings: Finding[] = [];
  let byCorrection = 0;
  let byDelivery = 0;
  for (const cell of clean.cells) {
    const id = `${cell.key}\u0000${cell.column}`;
    if (touchedCells.has(id) || touchedColumns.has(cell.column)) byCorrection += 1;
    else if (rawCells.has(`${cell.key}\u0000${rawNameOf(cell.column)}`)) byDelivery += 1;
    else if (derived.has(cell.column) && (touchedRows.has(cell.key) || rawRows.has(cell.key))) byCorrection += 1;
    else {
      findings.push({
        rule: 'change-without-correction',
        severity: 'error',
        table: name,
        key: cell.key,
        column: cell.column,
        message: `${name} ${cell.key} ${cell.column}: ${cell.old ?? '∅'} → ${cell.new ?? '∅'} with no correction in the range and no new delivery changing it`,
      });
    }
  }
  for (const k of clean.addedKeys) {
    if (rawAdded.has(k)) byDelivery += 1;
    else findings.push({ rule: 'change-without-correction', severity: 'error', table: name, key: k, message: `${name} row ${k} appeared without a new delivery holding it` });
  }
  for (const k of clean.removedKeys) {
    if (deletedRows.has(k)) byCorrection += 1;
    else if (rawRemoved.has(k)) byDelivery += 1;
    else findings.push({ rule: 'change-without-correction', severity: 'error', table: name, key: k, message: `${name} row ${k} disappeared without a correction deleting it or a delivery dropping it` });
  }
  for (const column of [...clean.summary.columns.added, ...clean.summary.columns.removed]) {
    const explained = touchedColumns.has(column) || raw.summary.columns.added.includes(rawNameOf(column)) || raw.summary.columns.removed.includes(column);
    if (!explained) findings.push({ rule: 'change-without-correction', severity: 'error', table: name, column, message: `${name} column ${column} was added or removed with no correction or delivery doing so` });
  }
  return {
    cellsChanged: clean.summary.cells.changed + clean.addedKeys.length + clean.removedKeys.length,
    byCorrection,
    byDelivery,
    findings,
  };
}

async function emptyLike(session: Session, table: string): Promise<string> {
  const name = `${table}__empty`;
  await session.run(`CREATE OR REPLACE TABLE ${ident(name)} AS SELECT * FROM ${ident(table)} LIMIT 0`);
  return name;
}
