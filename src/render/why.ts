import type { CellHistory } from '../audit/why.js';
import { plain, showValue, type Paint } from './paint.js';

export function renderWhyJson(history: CellHistory): string {
  return JSON.stringify(history, null, 2) + '\n';
}

/** The story of one cell, oldest first: raw value, each change with its decision, the value now. */
export function renderWhyText(history: CellHistory, paint: Paint = plain): string {
  const lines: string[] = [];
  lines.push(paint.bold(`${history.table} ${history.key} ${history.column}`));
  const rawLabel = history.raw.rowFound
    ? history.raw.column === null
      ? paint.dim('(column not in the raw delivery)')
      : `${showValue(history.raw.value)}${history.raw.column !== history.column ? paint.dim(` (as ${history.raw.column})`) : ''}`
    : paint.dim('(row not in the raw delivery)');
  lines.push(`  raw:    ${rawLabel}`);
  if (history.events.length === 0) lines.push(paint.dim('  no correction changed this cell'));
  for (const e of history.events) {
    lines.push('');
    lines.push(`  ${paint.cyan(e.file)} step ${e.step} (${e.stepKind}, line ${e.line})`);
    lines.push(`    ${describeChange(e, paint)}`);
    lines.push(`    reason:   ${e.reason}`);
    const note = e.note ? `${e.approval} — ${e.approverName ?? e.note.approver}${e.note.role ? ` (${e.note.role})` : ''}, ${e.note.date}: ${e.note.approves}` : e.approval ? `${e.approval} ${paint.red('(note not found)')}` : paint.red('none');
    lines.push(`    approval: ${note}`);
    if (e.introduced) lines.push(paint.dim(`    committed ${e.introduced.commit.slice(0, 7)} by ${e.introduced.author} on ${e.introduced.date.slice(0, 10)}`));
    else lines.push(paint.dim('    not committed yet'));
  }
  lines.push('');
  const now = history.clean.rowFound ? (history.clean.columnFound ? showValue(history.clean.value) : paint.dim('(column not in the clean table)')) : paint.dim('(row not in the clean table)');
  lines.push(`  clean:  ${paint.bold(now)}`);
  return lines.join('\n') + '\n';
}

function describeChange(e: CellHistory['events'][number], paint: Paint): string {
  switch (e.change) {
    case 'cell':
      return `${paint.red(showValue(e.old))} → ${paint.green(showValue(e.new))}${e.column ? paint.dim(` (${e.column})`) : ''}`;
    case 'row-deleted':
      return paint.red('row deleted');
    case 'column-renamed':
      return `column renamed ${e.old} → ${e.new}`;
    case 'column-added':
      return `column ${e.column} created (${e.old ? `from ${e.old} as ${e.new}` : `= ${e.new}`})`;
    case 'column-retyped':
      return `column ${e.column} retyped ${e.old} → ${e.new}`;
    case 'column-dropped':
      return `column ${e.column} dropped`;
  }
}
