import type { MultisetDiff, TableDiff } from '../diff/types.js';
import { escapeMarkdownCell, showValue } from './paint.js';

/** A pull-request comment: a summary table, then the first `limit` changed cells and how many more. */
export function renderDiffMarkdown(diffs: readonly TableDiff[], limit = 50): string {
  const lines = ['| Table | Rows changed | Cells changed | Rows added | Rows removed | Columns added | Columns removed |', '|---|---:|---:|---:|---:|---|---|'];
  for (const d of diffs) {
    const s = d.summary;
    lines.push(
      `| ${escapeMarkdownCell(d.table)} | ${s.rows.changed} | ${s.cells.changed} | ${s.rows.added} | ${s.rows.removed} | ${escapeMarkdownCell(s.columns.added.join(', '))} | ${escapeMarkdownCell(s.columns.removed.join(', '))} |`,
    );
  }
  for (const d of diffs) {
    if (d.summary.cells.changed === 0 && d.addedKeys.length === 0 && d.removedKeys.length === 0) continue;
    lines.push('', `### ${escapeMarkdownCell(d.table)}`, '');
    const attributed = d.cells.some((c) => c.correction !== undefined);
    if (d.cells.length) {
      lines.push(`| ${escapeMarkdownCell(d.key.join(', '))} | Column | Old | New |${attributed ? ' Correction |' : ''}`, `|---|---|---|---|${attributed ? '---|' : ''}`);
      for (const c of d.cells.slice(0, limit)) {
        lines.push(
          `| ${escapeMarkdownCell(c.key)} | ${escapeMarkdownCell(c.column)} | ${escapeMarkdownCell(showValue(c.old))} | ${escapeMarkdownCell(showValue(c.new))} |${attributed ? ` ${escapeMarkdownCell(c.correction ?? '—')} |` : ''}`,
        );
      }
    }
    const more = d.summary.cells.changed - Math.min(limit, d.cells.length);
    if (more > 0) lines.push('', `…and ${more} more changed cell${more === 1 ? '' : 's'}.`);
    if (d.addedKeys.length) lines.push('', `Rows added: ${escapeMarkdownCell(d.addedKeys.slice(0, limit).join(', '))}${d.addedKeys.length > limit ? ` …and ${d.addedKeys.length - limit} more` : ''}`);
    if (d.removedKeys.length) lines.push('', `Rows removed: ${escapeMarkdownCell(d.removedKeys.slice(0, limit).join(', '))}${d.removedKeys.length > limit ? ` …and ${d.removedKeys.length - limit} more` : ''}`);
  }
  return lines.join('\n') + '\n';
}

export function renderMultisetMarkdown(diff: MultisetDiff, limit = 50): string {
  const lines = [`**${escapeMarkdownCell(diff.table)}** (no key): ${diff.rows.onlyOld} rows only in old, ${diff.rows.onlyNew} only in new, ${diff.rows.common} in both.`, ''];
  const header = `| Side | Count | ${diff.columns.compared.map(escapeMarkdownCell).join(' | ')} |`;
  lines.push(header, `|---|---:|${diff.columns.compared.map(() => '---|').join('')}`);
  const rows = [...diff.onlyOld.map((r) => ['old', r] as const), ...diff.onlyNew.map((r) => ['new', r] as const)];
  for (const [side, r] of rows.slice(0, limit)) {
    lines.push(`| ${side} | ${r.count} | ${diff.columns.compared.map((c) => escapeMarkdownCell(showValue(r.values[c]))).join(' | ')} |`);
  }
  if (rows.length > limit) lines.push('', `…and ${rows.length - limit} more.`);
  return lines.join('\n') + '\n';
}
