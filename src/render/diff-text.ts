import { diffWordsWithSpace } from 'diff';
import type { CellChange, MultisetDiff, TableDiff } from '../diff/types.js';
import { plain, showValue, type Paint } from './paint.js';

/** Summary first, then schema changes, added and removed keys, then changed rows with old → new per cell. */
export function renderDiffText(diff: TableDiff, paint: Paint = plain): string {
  const { summary } = diff;
  const lines: string[] = [];
  lines.push(paint.bold(`${diff.table}: ${summaryLine(diff)}`));
  if (summary.columns.added.length) lines.push(`  columns added:   ${summary.columns.added.join(', ')}`);
  if (summary.columns.removed.length) lines.push(`  columns removed: ${summary.columns.removed.join(', ')}`);
  for (const r of diff.retyped) lines.push(`  column retyped:  ${r.column} ${r.from} → ${r.to}`);
  for (const r of diff.renamed) lines.push(`  likely renamed:  ${r.from} → ${r.to} (same values in every row)`);
  if (diff.removedKeys.length) lines.push(`  ${paint.red(`- rows removed (${diff.removedKeys.length}):`)} ${abbreviateList(diff.removedKeys)}`);
  if (diff.addedKeys.length) lines.push(`  ${paint.green(`+ rows added (${diff.addedKeys.length}):`)} ${abbreviateList(diff.addedKeys)}`);
  let currentKey: string | null = null;
  for (const cell of diff.cells) {
    if (cell.key !== currentKey) {
      lines.push(`  ${paint.yellow('~')} ${paint.bold(`${diff.key.join(',')}=${cell.key}`)}`);
      currentKey = cell.key;
    }
    lines.push(`      ${cell.column}: ${renderChange(cell, paint)}${cell.correction ? paint.dim(`  [${cell.correction}]`) : ''}`);
  }
  if (!diff.complete) lines.push(paint.dim(`  … ${diff.summary.cells.changed - diff.cells.length} more changed cells not shown`));
  return lines.join('\n') + '\n';
}

export function summaryLine(diff: TableDiff): string {
  const { rows, cells } = diff.summary;
  if (rows.added + rows.removed + rows.changed === 0 && !diff.summary.columns.added.length && !diff.summary.columns.removed.length) {
    return `no differences (${rows.unchanged} rows)`;
  }
  return `${rows.changed} row${rows.changed === 1 ? '' : 's'} changed (${cells.changed} cell${cells.changed === 1 ? '' : 's'}), ${rows.added} added, ${rows.removed} removed, ${rows.unchanged} unchanged`;
}

/** old → new; for two texts sharing some words, the words that changed are marked within the value. */
export function renderChange(cell: CellChange, paint: Paint): string {
  if (cell.old !== null && cell.new !== null && /[A-Za-z]/.test(cell.old + cell.new) && cell.old.length + cell.new.length < 400) {
    const parts = diffWordsWithSpace(cell.old, cell.new);
    const shared = parts.some((p) => !p.added && !p.removed && p.value.trim() !== '');
    if (!shared) return `${paint.red(showValue(cell.old))} → ${paint.green(showValue(cell.new))}`;
    const before = parts.filter((p) => !p.added).map((p) => (p.removed ? paint.red(`[-${p.value}-]`) : p.value)).join('');
    const after = parts.filter((p) => !p.removed).map((p) => (p.added ? paint.green(`{+${p.value}+}`) : p.value)).join('');
    return `${before} → ${after}`;
  }
  return `${paint.red(showValue(cell.old))} → ${paint.green(showValue(cell.new))}`;
}

function abbreviateList(keys: readonly string[], max = 20): string {
  return keys.length <= max ? keys.join(', ') : `${keys.slice(0, max).join(', ')}, … (${keys.length - max} more)`;
}

export function renderMultisetText(diff: MultisetDiff, paint: Paint = plain): string {
  const lines = [paint.bold(`${diff.table}: ${diff.rows.onlyOld} row${diff.rows.onlyOld === 1 ? '' : 's'} only in old, ${diff.rows.onlyNew} only in new, ${diff.rows.common} in both (compared without a key)`)];
  if (diff.columns.added.length) lines.push(`  columns added:   ${diff.columns.added.join(', ')}`);
  if (diff.columns.removed.length) lines.push(`  columns removed: ${diff.columns.removed.join(', ')}`);
  const row = (r: MultisetDiff['onlyOld'][number]) => diff.columns.compared.map((c) => showValue(r.values[c])).join(', ') + (r.count > 1 ? paint.dim(`  ×${r.count}`) : '');
  for (const r of diff.onlyOld) lines.push(`  ${paint.red('-')} ${row(r)}`);
  for (const r of diff.onlyNew) lines.push(`  ${paint.green('+')} ${row(r)}`);
  if (!diff.complete) lines.push(paint.dim('  … more rows not shown'));
  return lines.join('\n') + '\n';
}
