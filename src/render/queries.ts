import type { ChalkInstance } from 'chalk';
import type { ImportPlan } from '../queries/import-answers.js';
import type { QueryExport } from '../queries/export-queries.js';

/** What `errata queries export` says after writing a sheet. */
export function renderExport(result: QueryExport, file: string): string {
  const byTable = new Map<string, number>();
  for (const q of result.queries) byTable.set(q.table, (byTable.get(q.table) ?? 0) + 1);
  const lines = [`wrote ${result.queries.length} quer${result.queries.length === 1 ? 'y' : 'ies'} to ${file}${byTable.size ? ` (${[...byTable].map(([t, n]) => `${t} ${n}`).join(', ')})` : ''}`];
  if (result.answered) lines.push(`${result.answered} already answered (their notes exist) left out`);
  if (result.notCells) lines.push(`${result.notCells} discrepanc${result.notCells === 1 ? 'y is' : 'ies are'} about whole columns, not cells: see errata check`);
  return lines.join('\n');
}

/** What `errata queries import` did (or, with dryRun, would do), row by row where it matters. */
export function renderImportText(plan: ImportPlan, color: ChalkInstance, options: { dryRun: boolean }): string {
  const lines: string[] = [];
  const verb = options.dryRun ? 'would write' : 'wrote';
  const notes = plan.used.length;
  const drafts = plan.used.filter((u) => u.correction).length;
  lines.push(`${plan.used.length} answer${plan.used.length === 1 ? '' : 's'} used: ${verb} ${notes} note${notes === 1 ? '' : 's'} and ${drafts} draft correction${drafts === 1 ? '' : 's'}`);
  for (const u of plan.used) {
    lines.push(`  row ${u.row}  ${u.query}  ${u.table} ${u.key} ${u.column}: ${u.decision}  → ${u.note}${u.correction ? `, ${u.correction}` : ''}`);
  }
  if (plan.unanswered.length) lines.push(color.dim(`${plan.unanswered.length} row${plan.unanswered.length === 1 ? '' : 's'} not answered yet (left open): ${compactRows(plan.unanswered)}`));
  if (plan.rejected.length) {
    lines.push(color.red(`${plan.rejected.length} row${plan.rejected.length === 1 ? '' : 's'} could not be used:`));
    for (const r of plan.rejected) lines.push(`  ✗ row ${r.row}${r.query ? `  ${r.query}` : ''}: ${r.reason}`);
  }
  if (drafts && !options.dryRun) lines.push(color.dim('Review the drafts (errata diff HEAD), then commit them with their notes.'));
  return lines.join('\n');
}

/** The import as one JSON object: used, rejected and unanswered rows, and the files written. */
export function renderImportJson(plan: ImportPlan, options: { dryRun: boolean }): string {
  return `${JSON.stringify({ dryRun: options.dryRun, used: plan.used, rejected: plan.rejected, unanswered: plan.unanswered, files: plan.files.map((f) => f.file) }, null, 2)}\n`;
}

function compactRows(rows: readonly number[]): string {
  return rows.length > 12 ? `${rows.slice(0, 12).join(', ')}, …` : rows.join(', ');
}
