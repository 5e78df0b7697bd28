import type { DiffSummary, MultisetDiff, TableDiff } from '../diff/types.js';

/** Exactly the documented summary object, keys in the documented order. */
export function summaryObject(summary: DiffSummary): DiffSummary {
  return {
    rows: { added: summary.rows.added, removed: summary.rows.removed, changed: summary.rows.changed, unchanged: summary.rows.unchanged },
    cells: { changed: summary.cells.changed },
    columns: { added: [...summary.columns.added], removed: [...summary.columns.removed], retyped: [...summary.columns.retyped] },
  };
}

/** Several tables' summaries add up to one object of the same shape; column names get a table prefix. */
export function combinedSummary(diffs: readonly TableDiff[]): DiffSummary {
  if (diffs.length === 1) return summaryObject(diffs[0].summary);
  const total: DiffSummary = { rows: { added: 0, removed: 0, changed: 0, unchanged: 0 }, cells: { changed: 0 }, columns: { added: [], removed: [], retyped: [] } };
  for (const d of diffs) {
    total.rows.added += d.summary.rows.added;
    total.rows.removed += d.summary.rows.removed;
    total.rows.changed += d.summary.rows.changed;
    total.rows.unchanged += d.summary.rows.unchanged;
    total.cells.changed += d.summary.cells.changed;
    total.columns.added.push(...d.summary.columns.added.map((c) => `${d.table}.${c}`));
    total.columns.removed.push(...d.summary.columns.removed.map((c) => `${d.table}.${c}`));
    total.columns.retyped.push(...d.summary.columns.retyped.map((c) => `${d.table}.${c}`));
  }
  return total;
}

export function renderDiffJson(diffs: readonly TableDiff[], summaryOnly: boolean): string {
  if (summaryOnly) return JSON.stringify(combinedSummary(diffs)) + '\n';
  const full = diffs.map((d) => ({
    table: d.table,
    key: d.key,
    summary: summaryObject(d.summary),
    retyped: d.retyped,
    renamed: d.renamed,
    rowsAdded: d.addedKeys,
    rowsRemoved: d.removedKeys,
    cells: d.cells,
    complete: d.complete,
  }));
  return JSON.stringify({ tables: full }, null, 2) + '\n';
}

export function renderMultisetJson(diff: MultisetDiff): string {
  return JSON.stringify(diff, null, 2) + '\n';
}
