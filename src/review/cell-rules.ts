import type { Session } from '../engine/session.js';
import { ident, literal } from '../engine/sql.js';
import { diffTables } from '../diff/table-diff.js';
import { emptyLike } from '../engine/load-table.js';
import type { TableBuild } from '../build/build-project.js';
import type { Finding } from './types.js';

export interface CellExplanation {
  cellsChanged: number;
  byCorrection: number;
  byDelivery: number;
  findings: Finding[];
}

/** Unexplained cells listed one finding each, up to this many per table; the rest are counted. */
const LISTED = 1000;

/**
 * Every clean cell that differs between base and head must be explained: by a correction added (or
 * changed) in the range that touched that cell, row or column, or by a new raw delivery whose value
 * for that cell differs. Whatever is left is a finding. The matching runs in SQL, so a range that
 * changes hundreds of thousands of cells never brings them into JavaScript.
 */
export async function explainChangedCells(
  session: Session,
  base: TableBuild | undefined,
  head: TableBuild,
  newCorrections: ReadonlySet<string>,
  options: { rawChanged: boolean },
): Promise<CellExplanation> {
  const name = head.config.name;
  const key = head.config.key;
  const t = (suffix: string) => `review_${name}_${suffix}`;
  const baseClean = base?.cleanTable ?? (await emptyLike(session, head.cleanTable, `${head.cleanTable}__empty`));
  const clean = await diffTables(session, baseClean, head.cleanTable, { key, table: name, cellLimit: 0, cellTable: t('cells') });

  const ids = [...newCorrections];
  const inRange = ids.length ? `"correction" IN (${ids.map((_, i) => `$${i + 1}`).join(', ')})` : 'false';
  await session.run(`CREATE OR REPLACE TEMP TABLE ${ident(t('lineage'))} AS
    SELECT "key", "column", "new", "change" FROM ${ident(head.lineageTable)} WHERE ${inRange}`, ids);
  // Column events name the column they touched; a rename also makes its new name appear.
  const touchedColumns = (
    await session.all<{ c: string }>(
      `SELECT DISTINCT c FROM (
         SELECT "column" AS c FROM ${ident(t('lineage'))} WHERE "key" IS NULL AND "column" IS NOT NULL
         UNION ALL SELECT "new" FROM ${ident(t('lineage'))} WHERE "change" = 'column-renamed')`,
    )
  ).map((r) => r.c);
  const deletedRows = new Set((await session.all<{ k: string }>(`SELECT "key" AS k FROM ${ident(t('lineage'))} WHERE "change" = 'row-deleted'`)).map((r) => r.k));

  // A new delivery explains the cells whose raw value differs; without one, nothing can be explained so.
  let raw = { added: new Set<string>(), removed: new Set<string>(), columnsAdded: [] as string[], columnsRemoved: [] as string[] };
  if (options.rawChanged && head.rawTable) {
    const baseRaw = base?.rawTable ?? (await emptyLike(session, head.rawTable, `${head.rawTable}__empty`));
    const rawDiff = await diffTables(session, baseRaw, head.rawTable, { key, table: name, cellLimit: 0, cellTable: t('raw') });
    raw = { added: new Set(rawDiff.addedKeys), removed: new Set(rawDiff.removedKeys), columnsAdded: rawDiff.summary.columns.added, columnsRemoved: rawDiff.summary.columns.removed };
  } else {
    await session.run(`CREATE OR REPLACE TEMP TABLE ${ident(t('raw'))} ("key" VARCHAR, "column" VARCHAR)`);
  }

  // A clean column may carry another name in the raw delivery (renamed by a correction).
  const renames = await session.all<{ old: string; new: string }>(`SELECT "old", "new" FROM ${ident(head.lineageTable)} WHERE "change" = 'column-renamed' ORDER BY "entry"`);
  const rawNameOf = (column: string) => {
    let current = column;
    for (const r of [...renames].reverse()) if (r.new === current) current = r.old;
    return current;
  };
  const derived = (await session.all<{ c: string }>(`SELECT DISTINCT "column" AS c FROM ${ident(head.lineageTable)} WHERE "change" = 'column-added'`)).map((r) => r.c);
  const list = (values: string[]) => (values.length ? values.map(literal).join(', ') : 'NULL');
  const renamed = renames.map((r) => r.new).filter((n, i, all) => all.indexOf(n) === i);
  const rawName = renamed.length ? `CASE c."column" ${renamed.map((n) => `WHEN ${literal(n)} THEN ${literal(rawNameOf(n))}`).join(' ')} ELSE c."column" END` : 'c."column"';

  await session.run(`CREATE OR REPLACE TEMP TABLE ${ident(t('explained'))} AS
    SELECT c."key", c."column", c."old", c."new",
      CASE
        WHEN lc."key" IS NOT NULL OR c."column" IN (${list(touchedColumns)}) THEN 'correction'
        WHEN rc."key" IS NOT NULL THEN 'delivery'
        WHEN c."column" IN (${list(derived)}) AND rr."key" IS NOT NULL THEN 'correction'
        ELSE 'unexplained'
      END AS "how"
    FROM ${ident(t('cells'))} AS c
    LEFT JOIN (SELECT DISTINCT "key", "column" FROM ${ident(t('lineage'))} WHERE "change" = 'cell') AS lc
      ON lc."key" = c."key" AND lc."column" = c."column"
    LEFT JOIN ${ident(t('raw'))} AS rc ON rc."key" = c."key" AND rc."column" = ${rawName}
    LEFT JOIN (SELECT "key" FROM ${ident(t('lineage'))} WHERE "key" IS NOT NULL UNION SELECT "key" FROM ${ident(t('raw'))}) AS rr
      ON rr."key" = c."key"`);
  const counts = await session.one<{ correction: bigint; delivery: bigint; unexplained: bigint }>(`
    SELECT count(*) FILTER (WHERE "how" = 'correction') AS correction, count(*) FILTER (WHERE "how" = 'delivery') AS delivery,
           count(*) FILTER (WHERE "how" = 'unexplained') AS unexplained
    FROM ${ident(t('explained'))}`);
  const unexplained = await session.all<{ key: string; column: string; old: string | null; new: string | null }>(
    `SELECT "key", "column", "old", "new" FROM ${ident(t('explained'))} WHERE "how" = 'unexplained' ORDER BY "key", "column" LIMIT ${LISTED}`,
  );

  const findings: Finding[] = unexplained.map((cell) => ({
    rule: 'change-without-correction',
    severity: 'error',
    table: name,
    key: cell.key,
    column: cell.column,
    message: `${name} ${cell.key} ${cell.column}: ${cell.old ?? '∅'} → ${cell.new ?? '∅'} with no correction in the range and no new delivery changing it`,
  }));
  const more = Number(counts.unexplained) - unexplained.length;
  if (more > 0) findings.push({ rule: 'change-without-correction', severity: 'error', table: name, message: `${name}: ${more} more cells changed without a correction or a new delivery` });
  let byCorrection = Number(counts.correction);
  let byDelivery = Number(counts.delivery);
  for (const k of clean.addedKeys) {
    if (raw.added.has(k)) byDelivery += 1;
    else findings.push({ rule: 'change-without-correction', severity: 'error', table: name, key: k, message: `${name} row ${k} appeared without a new delivery holding it` });
  }
  for (const k of clean.removedKeys) {
    if (deletedRows.has(k)) byCorrection += 1;
    else if (raw.removed.has(k)) byDelivery += 1;
    else findings.push({ rule: 'change-without-correction', severity: 'error', table: name, key: k, message: `${name} row ${k} disappeared without a correction deleting it or a delivery dropping it` });
  }
  for (const column of [...clean.summary.columns.added, ...clean.summary.columns.removed]) {
    const explained = touchedColumns.includes(column) || raw.columnsAdded.includes(rawNameOf(column)) || raw.columnsRemoved.includes(column);
    if (!explained) findings.push({ rule: 'change-without-correction', severity: 'error', table: name, column, message: `${name} column ${column} was added or removed with no correction or delivery doing so` });
  }
  for (const suffix of ['cells', 'lineage', 'raw', 'explained']) await session.run(`DROP TABLE IF EXISTS ${ident(t(suffix))}`);
  return { cellsChanged: clean.summary.cells.changed + clean.addedKeys.length + clean.removedKeys.length, byCorrection, byDelivery, findings };
}
