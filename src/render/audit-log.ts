import type { AuditEntry } from '../audit/audit-trail.js';
import { neutraliseFormula } from '../engine/formula-guard.js';
import { csvField, escapeMarkdownCell, plain, type Paint } from './paint.js';

export type LogFormat = 'text' | 'markdown' | 'csv' | 'json';

export function renderAuditLog(entries: readonly AuditEntry[], format: LogFormat, paint: Paint = plain): string {
  switch (format) {
    case 'json':
      return JSON.stringify({ corrections: entries }, null, 2) + '\n';
    case 'csv':
      return renderCsv(entries);
    case 'markdown':
      return renderMarkdown(entries);
    case 'text':
      return renderText(entries, paint);
  }
}

function perColumn(entry: AuditEntry): string {
  const parts = Object.entries(entry.cellsByColumn).map(([column, n]) => `${column} ${n}`);
  if (entry.rowsDeleted) parts.push(`${entry.rowsDeleted} row${entry.rowsDeleted > 1 ? 's' : ''} deleted`);
  for (const e of entry.columnEvents) parts.push(`${e.change.replace('column-', '')} ${e.column}${e.detail ? ` (${e.detail})` : ''}`);
  return parts.join(', ') || 'no change';
}

function renderText(entries: readonly AuditEntry[], paint: Paint): string {
  if (entries.length === 0) return 'No corrections.\n';
  const lines: string[] = [];
  for (const e of entries) {
    lines.push(`${paint.bold(e.file)}${e.commit ? paint.dim(`  ${e.commit.slice(0, 7)} ${e.date?.slice(0, 10)} ${e.author}`) : paint.yellow('  (not committed)')}`);
    lines.push(`  reason:   ${e.reason}`);
    lines.push(`  approval: ${e.approval ? `${e.approval}${e.approver ? ` by ${e.approverName ?? e.approver} on ${e.approvedOn}` : paint.red(' (note not found)')}` : paint.red('none')}`);
    lines.push(`  changed:  ${e.cellsChanged} cell${e.cellsChanged === 1 ? '' : 's'}${e.cellsChanged || e.rowsDeleted || e.columnEvents.length ? ` — ${perColumn(e)}` : ''}`);
    lines.push('');
  }
  return lines.join('\n');
}

function renderMarkdown(entries: readonly AuditEntry[]): string {
  const lines = [
    '| Correction | Date | Author | Reason | Approval | Cells changed |',
    '|---|---|---|---|---|---|',
  ];
  for (const e of entries) {
    const approval = e.approval ? `${e.approval}${e.approver ? ` (${e.approverName ?? e.approver}, ${e.approvedOn})` : ' (note not found)'}` : 'none';
    lines.push(
      `| ${codeCell(e.file)} | ${e.date?.slice(0, 10) ?? 'not committed'} | ${escapeMarkdownCell(e.author ?? '')} | ${escapeMarkdownCell(e.reason)} | ${escapeMarkdownCell(approval)} | ${escapeMarkdownCell(perColumn(e))} |`,
    );
  }
  return lines.join('\n') + '\n';
}

/** A file name as code in a table cell, or escaped text when it holds what would end the code or the cell. */
function codeCell(text: string): string {
  return /[`|\r\n\u2028\u2029]/.test(text) ? escapeMarkdownCell(text) : `\`${text}\``;
}

function renderCsv(entries: readonly AuditEntry[]): string {
  const header = ['table', 'correction', 'file', 'commit', 'date', 'author', 'reason', 'approval', 'approver', 'approved_on', 'column', 'cells_changed'];
  const rows = [header.join(',')];
  for (const e of entries) {
    const base = [e.table, e.correction, e.file, e.commit, e.date, e.author, e.reason, e.approval, e.approver, e.approvedOn];
    const columns = Object.entries(e.cellsByColumn);
    if (e.rowsDeleted) columns.push(['(rows deleted)', e.rowsDeleted]);
    if (columns.length === 0) columns.push(['', 0]);
    // Reasons and names come from pull requests; a spreadsheet must show them, not run them.
    for (const [column, n] of columns) rows.push([...base, column, n].map((v) => csvField(typeof v === 'string' ? neutraliseFormula(v) : v)).join(','));
  }
  return rows.join('\n') + '\n';
}
