import type { TableDiff } from '../diff/types.js';
import { escapeHtml } from './html.js';
import { showValue } from './paint.js';
import { summaryLine } from './diff-text.js';

/**
 * A self-contained page (no scripts, fonts or requests): summary, schema changes, and the changed
 * cells as a real table. A change is marked by the words "old"/"new" and symbols, not by colour alone.
 */
export function renderDiffHtml(diffs: readonly TableDiff[], title = 'errata diff'): string {
  const sections = diffs.map((d) => {
    const schema = [
      ...d.summary.columns.added.map((c) => `<li>column added: <code>${escapeHtml(c)}</code></li>`),
      ...d.summary.columns.removed.map((c) => `<li>column removed: <code>${escapeHtml(c)}</code></li>`),
      ...d.retyped.map((r) => `<li>column retyped: <code>${escapeHtml(r.column)}</code> ${escapeHtml(r.from)} → ${escapeHtml(r.to)}</li>`),
      ...d.renamed.map((r) => `<li>likely renamed: <code>${escapeHtml(r.from)}</code> → <code>${escapeHtml(r.to)}</code></li>`),
    ];
    const attributed = d.cells.some((c) => c.correction !== undefined);
    const rows = d.cells
      .map(
        (c) =>
          `<tr><th scope="row">${escapeHtml(c.key)}</th><td>${escapeHtml(c.column)}</td><td class="old"><span aria-hidden="true">− </span>${escapeHtml(showValue(c.old))}</td><td class="new"><span aria-hidden="true">+ </span>${escapeHtml(showValue(c.new))}</td>${attributed ? `<td>${escapeHtml(c.correction ?? '—')}</td>` : ''}</tr>`,
      )
      .join('\n');
    const keys = (label: string, list: string[]) => (list.length ? `<p><strong>${label} (${list.length}):</strong> ${escapeHtml(list.slice(0, 200).join(', '))}${list.length > 200 ? ' …' : ''}</p>` : '');
    return `<section>
<h2>${escapeHtml(d.table)}</h2>
<p>${escapeHtml(summaryLine(d))}</p>
${schema.length ? `<ul>${schema.join('')}</ul>` : ''}
${keys('Rows added', d.addedKeys)}${keys('Rows removed', d.removedKeys)}
${d.cells.length ? `<table><caption>Changed cells${d.complete ? '' : ` (first ${d.cells.length} of ${d.summary.cells.changed})`}</caption>
<thead><tr><th scope="col">${escapeHtml(d.key.join(', '))}</th><th scope="col">Column</th><th scope="col">Old</th><th scope="col">New</th>${attributed ? '<th scope="col">Correction</th>' : ''}</tr></thead>
<tbody>
${rows}
</tbody></table>` : ''}
</section>`;
  });
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'">
<title>${escapeHtml(title)}</title>
<style>
body{font:14px/1.4 system-ui,sans-serif;margin:2rem;color:#1d1d1f}
table{border-collapse:collapse;margin:1rem 0}th,td{border:1px solid #ccc;padding:.25rem .5rem;text-align:left;vertical-align:top}
caption{text-align:left;font-weight:600;padding:.25rem 0}td.old{background:#fdecea}td.new{background:#e7f5ea}
code{font-family:ui-monospace,monospace}
@media print{td.old,td.new{background:none}}
</style></head><body>
<h1>${escapeHtml(title)}</h1>
${sections.join('\n')}
</body></html>
`;
}
