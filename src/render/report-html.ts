import { createHash } from 'node:crypto';
import type { AuditEntry } from '../audit/audit-trail.js';
import type { CellChange, TableDiff } from '../diff/types.js';
import type { ColumnComparison, ColumnProfile, Flag, Frequency } from '../profile/types.js';
import type { ApprovalNote } from '../project/notes.js';
import type { ReportData, ReportTable } from '../report/types.js';
import { RULE_TEXT, type Finding } from '../review/types.js';
import { summaryLine } from './diff-text.js';
import { escapeHtml } from './html.js';
import { showValue } from './paint.js';
import { formatNumber } from './profile.js';
import { reviewPassed, summarizeReview } from './review.js';
import { embedJson } from './report-embed.js';
import { REPORT_SCRIPT } from './report-script.js';
import { REPORT_STYLE } from './report-style.js';
import { histogramSvg, pairedBarsSvg, type PairedItem } from './report-svg.js';

/** Changed cells embedded in one report, over all tables; about 60 bytes each, so some 6 MB at most. */
export const REPORT_CELL_LIMIT = 100_000;
/** Rows of a diff shown at once; the page's script pages through the rest. */
export const REPORT_PAGE_SIZE = 50;
/** Codes drawn per coded variable; the rest are summed into one bar. */
const CODES_DRAWN = 12;

export interface ReportHtmlOptions {
  /** At most this many changed cells are embedded in the page (all are counted). */
  cellLimit?: number;
}

const h = escapeHtml;
const short = (commit: string) => commit.slice(0, 7);
const plural = (count: number, one: string, many = `${one}s`) => `${count.toLocaleString('en')} ${count === 1 ? one : many}`;

/**
 * One self-contained HTML page: overview, raw-against-clean profile with inline SVG plots, codebook
 * discrepancies by rule, the filterable and paged cell-level diff, the audit trail and the approval
 * notes. No request leaves the page: styles and the script are inline, the Content-Security-Policy
 * allows nothing else, and every value from the data is escaped (or embedded as JSON that cannot end
 * its script block).
 *
 * @example
 *   writeFileSync('report.html', renderReportHtml(await gatherReport({ root, range, cellLimit, workDir })));
 */
export function renderReportHtml(data: ReportData, options: ReportHtmlOptions = {}): string {
  const embedded = embeddedCells(data, options.cellLimit ?? REPORT_CELL_LIMIT);
  const range = `${short(data.range.base)}..${short(data.range.head)}`;
  const title = `errata report ${range}`;
  const scriptHash = createHash('sha256').update(REPORT_SCRIPT).digest('base64');
  const diffs = data.diffs.map((d, i) => renderDiff(d, i, data, embedded[i]));
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; script-src 'sha256-${scriptHash}'">
<meta name="referrer" content="no-referrer">
<title>${h(title)}</title>
<style>${REPORT_STYLE}</style>
</head><body data-page-size="${REPORT_PAGE_SIZE}">
<header>
<h1>Data report</h1>
<p class="sub">Commits <code>${h(range)}</code> (${h(rangeText(data))}). Written by errata from the project's raw deliveries, codebook, corrections and approval notes.</p>
<nav aria-label="Contents"><ol>
<li><a href="#overview">Overview</a></li>
<li><a href="#review">Review</a></li>
${data.tables.map((t, i) => `<li><a href="#profile-${i + 1}">Profile: ${h(t.name)}</a></li>`).join('\n')}
${data.diffs.map((d, i) => `<li><a href="#diff-${i + 1}">Changes: ${h(d.table)}</a></li>`).join('\n')}
<li><a href="#audit">Audit trail</a></li>
<li><a href="#notes">Approval notes</a></li>
</ol></nav>
</header>
<main>
${renderOverview(data)}
${renderReview(data)}
${data.tables.map((t, i) => renderProfile(t, i)).join('\n')}
${diffs.join('\n')}
${renderAudit(data, embedded)}
${renderNotes(data.notes)}
</main>
<script>${REPORT_SCRIPT}</script>
</body></html>
`;
}

function rangeText(data: ReportData): string {
  switch (data.range.choice) {
    case 'given':
      return 'the range asked for';
    case 'merge-base':
      return 'from the merge base with the main branch to HEAD';
    case 'first-correction':
      return 'from just before the first correction to HEAD';
    case 'whole-history':
      return 'the whole history to HEAD';
  }
}

function renderOverview(data: ReportData): string {
  const rows = data.tables.reduce((sum, t) => sum + t.comparison.rows.clean, 0);
  const cells = data.diffs.reduce((sum, d) => sum + d.summary.cells.changed, 0);
  const passed = reviewPassed(data.review);
  const errors = data.review.findings.filter((f) => f.severity === 'error').length;
  const warnings = data.review.findings.length - errors;
  const status = passed
    ? `<span class="status-pass">✓ passed</span>`
    : `<span class="status-fail">✗ failed</span>`;
  const item = (label: string, value: string) => `<div><dt>${label}</dt><dd>${value}</dd></div>`;
  return `<section id="overview" aria-labelledby="overview-h">
<h2 id="overview-h">Overview</h2>
<dl class="overview">
${item('Tables', String(data.tables.length))}
${item('Rows (clean, at head)', rows.toLocaleString('en'))}
${item('Corrections applied', String(data.audit.length))}
${item('Cells changed in range', cells.toLocaleString('en'))}
${item('Review', `${status}<br><small>${plural(errors, 'finding')}, ${plural(warnings, 'warning')}</small>`)}
</dl>
</section>`;
}

function findingWhere(f: Finding): string {
  const cell = f.key !== undefined ? `${f.table ?? ''} ${f.key}${f.column ? ` ${f.column}` : ''}` : f.column ? `${f.table ?? ''}.${f.column}` : f.table ?? '';
  return [cell.trim(), f.file, f.commit ? short(f.commit) : undefined].filter(Boolean).join(' · ');
}

function renderReview(data: ReportData): string {
  const findings = data.review.findings;
  const table = findings.length
    ? `<table><caption>Review findings (${findings.length})</caption>
<thead><tr><th scope="col">Severity</th><th scope="col">Rule</th><th scope="col">Where</th><th scope="col">Finding</th></tr></thead>
<tbody>
${findings
  .map(
    (f) =>
      `<tr><td>${f.severity === 'error' ? '✗ error' : '! warning'}</td><th scope="row"><code>${h(f.rule)}</code><br><small>${h(RULE_TEXT[f.rule])}</small></th><td>${h(findingWhere(f))}</td><td>${h(f.message)}</td></tr>`,
  )
  .join('\n')}
</tbody></table>`
    : '<p>No findings: every changed cell traces to an approved correction or a new delivery.</p>';
  return `<section id="review" aria-labelledby="review-h">
<h2 id="review-h">Review</h2>
<p>${h(summarizeReview(data.review))}</p>
${table}
</section>`;
}

// ── profile ────────────────────────────────────────────────────────────────────────────────────────

function renderProfile(table: ReportTable, index: number): string {
  const c = table.comparison;
  const figures = c.columns.map((column, j) => renderVariable(column, `p${index + 1}-${j + 1}`)).join('\n');
  return `<section id="profile-${index + 1}" aria-labelledby="profile-${index + 1}-h">
<h2 id="profile-${index + 1}-h">Profile: ${h(table.name)}, raw against clean</h2>
<p>${plural(c.rows.raw, 'row')} in the raw delivery, ${plural(c.rows.clean, 'row')} after corrections; ${plural(c.columns.length, 'variable')}. Raw is drawn dashed, clean solid.</p>
${renderDiscrepancies(table, index)}
<h3>Variables</h3>
<div class="cards">
${figures}
</div>
</section>`;
}

function renderDiscrepancies(table: ReportTable, index: number): string {
  if (!table.discrepancies) return `<p>No codebook, so no discrepancy counts for ${h(table.name)}.</p>`;
  if (table.discrepancies.length === 0) return '<p>Codebook check: no discrepancies, raw or clean.</p>';
  const rows = table.discrepancies
    .map((r) => {
      const change = r.clean - r.raw;
      return `<tr><th scope="row"><code>${h(r.rule)}</code></th><td>${r.severity}</td><td class="num">${r.raw}</td><td class="num">${r.clean}</td><td class="num">${change === 0 ? '0 (same)' : change < 0 ? `${change} (fewer)` : `+${change} (more)`}</td></tr>`;
    })
    .join('\n');
  const items: PairedItem[] = table.discrepancies.map((r) => ({ label: r.rule, raw: r.raw, clean: r.clean }));
  return `<h3>Codebook discrepancies by rule</h3>
<div class="cards"><figure class="variable">
<figcaption>Discrepancies per rule</figcaption>
${pairedBarsSvg(`d${index + 1}`, `Codebook discrepancies of ${table.name} by rule, raw and clean`, items)}
</figure>
<div><table><caption>Discrepancies by rule, raw against clean</caption>
<thead><tr><th scope="col">Rule</th><th scope="col">Severity</th><th scope="col" class="num">Raw</th><th scope="col" class="num">Clean</th><th scope="col" class="num">Change</th></tr></thead>
<tbody>
${rows}
</tbody></table></div></div>`;
}

function renderVariable(column: ColumnComparison, id: string): string {
  const { raw, clean } = column;
  const name = column.rawName ? `${column.name} (raw: ${column.rawName})` : column.name;
  const presence = !raw ? ' — added by a correction' : !clean ? ' — not in the clean data' : '';
  let chart = '';
  // A coded variable is drawn as its codes even when they are numbers (1 = current, 2 = former, …).
  if (raw?.frequencies || clean?.frequencies) {
    chart = pairedBarsSvg(id, `Frequencies of ${name}, raw and clean`, codeItems(raw?.frequencies ?? null, clean?.frequencies ?? null));
  } else if (raw?.histogram || clean?.histogram) {
    chart = histogramSvg(id, `Histogram of ${name}, raw and clean`, raw?.histogram ?? null, clean?.histogram ?? null);
  }
  return `<figure class="variable" id="var-${id}">
<figcaption><code>${h(name)}</code>${h(presence)}</figcaption>
${chart}
${statsTable(column, name)}
${flagList(column)}
</figure>`;
}

function codeItems(raw: Frequency[] | null, clean: Frequency[] | null): PairedItem[] {
  const label = (f: Frequency) => (f.value === null ? '∅ missing' : f.label ? `${showValue(f.value)} ${f.label}` : showValue(f.value));
  const items = new Map<string, PairedItem>();
  for (const [side, list] of [['raw', raw], ['clean', clean]] as const) {
    for (const f of list ?? []) {
      const item = items.get(label(f)) ?? { label: label(f), raw: raw ? 0 : null, clean: clean ? 0 : null };
      item[side] = f.count;
      items.set(label(f), item);
    }
  }
  const sorted = [...items.values()].sort((a, b) => Math.max(b.raw ?? 0, b.clean ?? 0) - Math.max(a.raw ?? 0, a.clean ?? 0));
  if (sorted.length <= CODES_DRAWN) return sorted;
  const rest = sorted.slice(CODES_DRAWN - 1);
  const sum = (side: 'raw' | 'clean') => (rest.every((r) => r[side] === null) ? null : rest.reduce((s, r) => s + (r[side] ?? 0), 0));
  return [...sorted.slice(0, CODES_DRAWN - 1), { label: `${rest.length} other codes`, raw: sum('raw'), clean: sum('clean') }];
}

const STATS: Array<[string, (p: ColumnProfile) => string]> = [
  ['type', (p) => p.type],
  ['n', (p) => String(p.n)],
  ['missing', (p) => String(p.missing)],
  ['distinct', (p) => String(p.distinct)],
  ['mean', (p) => formatNumber(p.mean)],
  ['sd', (p) => formatNumber(p.sd)],
  ['min', (p) => formatNumber(p.min)],
  ['median', (p) => formatNumber(p.median)],
  ['max', (p) => formatNumber(p.max)],
];

function statsTable(column: ColumnComparison, name: string): string {
  const numeric = (column.raw?.mean ?? null) !== null || (column.clean?.mean ?? null) !== null;
  const rows = STATS.filter(([label]) => numeric || !['mean', 'sd', 'min', 'median', 'max'].includes(label))
    .map(([label, get]) => {
      const raw = column.raw ? get(column.raw) : '—';
      const clean = column.clean ? get(column.clean) : '—';
      return `<tr><th scope="row">${label}</th><td class="num">${h(raw)}</td><td class="num">${h(clean)}${raw !== clean && column.raw && column.clean ? ' <span class="mark">(changed)</span>' : ''}</td></tr>`;
    })
    .join('');
  return `<table><caption>Summary of ${h(name)}</caption><thead><tr><th scope="col">Statistic</th><th scope="col" class="num">Raw</th><th scope="col" class="num">Clean</th></tr></thead><tbody>${rows}</tbody></table>`;
}

function flagList(column: ColumnComparison): string {
  const items = [
    ...column.resolved.map((f: Flag) => `<li>✓ resolved: ${h(f.message)}</li>`),
    ...column.introduced.map((f: Flag) => `<li>! new in clean: ${h(f.message)}</li>`),
    ...(column.clean?.flags ?? []).filter((f) => !column.introduced.includes(f)).map((f) => `<li>• still flagged: ${h(f.message)}</li>`),
  ];
  return items.length ? `<ul class="flags">${items.join('')}</ul>` : '';
}

// ── diff ───────────────────────────────────────────────────────────────────────────────────────────

/** The changed cells each diff embeds in the page: in table order, until `limit` cells in all. */
function embeddedCells(data: ReportData, limit: number): CellChange[][] {
  let left = limit;
  return data.diffs.map((diff) => {
    const cells = diff.cells.slice(0, Math.max(0, left));
    left -= cells.length;
    return cells;
  });
}

function renderDiff(diff: TableDiff, index: number, data: ReportData, embedded: CellChange[]): string {
  const id = `diff-${index + 1}`;
  const total = diff.summary.cells.changed;
  const columns = [...new Set(embedded.map((c) => c.column))].sort();
  const corrections = [...new Set(embedded.map((c) => c.correction).filter((c): c is string => Boolean(c)))].sort();
  const attributed = diff.cells.some((c) => c.correction !== undefined);
  const columnIndex = new Map(columns.map((c, i) => [c, i]));
  const correctionIndex = new Map(corrections.map((c, i) => [c, i]));
  const payload = {
    table: diff.table,
    attributed,
    columns,
    corrections,
    cells: embedded.map((c) => [c.key, columnIndex.get(c.column)!, showValue(c.old), showValue(c.new), c.correction ? correctionIndex.get(c.correction)! : -1]),
  };
  const schema = [
    ...diff.summary.columns.added.map((c) => `<li>+ column added: <code>${h(c)}</code></li>`),
    ...diff.summary.columns.removed.map((c) => `<li>− column removed: <code>${h(c)}</code></li>`),
    ...diff.retyped.map((r) => `<li>~ column retyped: <code>${h(r.column)}</code> ${h(r.from)} → ${h(r.to)}</li>`),
    ...diff.renamed.map((r) => `<li>~ likely renamed: <code>${h(r.from)}</code> → <code>${h(r.to)}</code></li>`),
  ];
  const keys = (label: string, list: string[], count: number) =>
    count ? `<p><strong>${label} (${count}):</strong> ${h(list.slice(0, 100).join(', '))}${count > 100 ? ` … and ${count - 100} more` : ''}</p>` : '';
  const range = `${short(data.range.base)}..${short(data.range.head)}`;
  const missing = total - embedded.length;
  const limitNote = missing > 0
    ? `<p class="limit" role="note">This page holds ${plural(embedded.length, 'changed cell')} of ${total.toLocaleString('en')}; ${plural(missing, 'more is', 'more are')} not embedded. Get them all with <code>errata diff ${h(range)} ${h(diff.table)} --format json</code> (or <code>--format html --limit ${total}</code>).</p>`
    : '';
  const option = (value: string, label: string) => `<option value="${h(value)}">${h(label)}</option>`;
  const firstPage = embedded.slice(0, REPORT_PAGE_SIZE).map((c) => staticRow(c, attributed)).join('\n');
  return `<section id="${id}" class="diff"${embedded.length ? ` data-cells="${id}-data"` : ''} aria-labelledby="${id}-h">
<h2 id="${id}-h">Changes: ${h(diff.table)} (${h(range)})</h2>
<p>${h(summaryLine(diff))}.</p>
${schema.length ? `<ul>${schema.join('')}</ul>` : ''}
${keys('Rows added', diff.addedKeys, diff.summary.rows.added)}${keys('Rows removed', diff.removedKeys, diff.summary.rows.removed)}
${limitNote}
${embedded.length ? `<form class="filters" hidden aria-label="Filter the changed cells of ${h(diff.table)}">
<label>Column<select name="column">${option('', 'all columns')}${columns.map((c) => option(c, c)).join('')}</select></label>
${attributed ? `<label>Correction<select name="correction">${option('', 'all corrections')}${option('-', 'no correction')}${corrections.map((c) => option(c, c)).join('')}</select></label>` : ''}
<label>Key contains<input name="key" type="search" autocomplete="off"></label>
<button type="button" data-page="prev">← Previous</button><button type="button" data-page="next">Next →</button>
</form>
<p class="diff-status" role="status" aria-live="polite">Showing 1–${Math.min(REPORT_PAGE_SIZE, embedded.length)} of ${embedded.length.toLocaleString('en')} changed cells.</p>
<table class="cells"><caption>Changed cells of ${h(diff.table)}: old value (−) and new value (+)</caption>
<thead><tr><th scope="col">${h(diff.key.join(', ') || 'row')}</th><th scope="col">Column</th><th scope="col">Old (−)</th><th scope="col">New (+)</th>${attributed ? '<th scope="col">Correction</th>' : ''}</tr></thead>
<tbody>
${firstPage}
</tbody></table>
<script type="application/json" id="${id}-data">${embedJson(payload)}</script>` : total ? '' : '<p>No changed cells.</p>'}
</section>`;
}

function staticRow(c: CellChange, attributed: boolean): string {
  return `<tr data-column="${h(c.column)}"><th scope="row">${h(c.key)}</th><td>${h(c.column)}</td><td class="old"><span class="mark" aria-hidden="true">− </span>${h(showValue(c.old))}</td><td class="new"><span class="mark" aria-hidden="true">+ </span>${h(showValue(c.new))}</td>${attributed ? `<td>${h(c.correction ?? '—')}</td>` : ''}</tr>`;
}

// ── audit trail and notes ──────────────────────────────────────────────────────────────────────────

function renderAudit(data: ReportData, embedded: CellChange[][]): string {
  const notes = new Set(data.notes.map((n) => n.id));
  const diffIds = new Map(data.diffs.map((d, i) => [d.table, `diff-${i + 1}`]));
  // Which corrections changed cells the page holds, gathered once rather than per audit entry: a
  // link to a correction whose cells were not embedded would show an empty table.
  const inDiff = new Set(data.diffs.flatMap((d, i) => embedded[i].map((c) => `${d.table}\u0000${c.correction}`)));
  const rows = data.audit.map((e: AuditEntry) => {
    const approval = !e.approval ? '✗ none' : notes.has(e.approval) ? `<a href="#note-${h(e.approval)}">${h(e.approval)}</a>` : `${h(e.approval)} (✗ note not found)`;
    const approver = e.approver ? `${h(e.approverName ?? e.approver)}${e.approvedOn ? `<br><small>on ${h(e.approvedOn)}</small>` : ''}` : '—';
    const committed = e.commit ? `${h((e.date ?? '').replace(/T(\d\d:\d\d):\d\dZ$/, ' $1 UTC'))}<br><code>${h(short(e.commit))}</code> ${h(e.author ?? '')}` : 'not committed';
    const changed = [
      ...Object.entries(e.cellsByColumn).map(([column, count]) => `${h(column)}: ${count}`),
      ...(e.rowsDeleted ? [`${plural(e.rowsDeleted, 'row')} deleted`] : []),
      ...e.columnEvents.map((ev) => `${h(ev.change)} ${h(ev.column)}${ev.detail ? ` (${h(ev.detail)})` : ''}`),
    ];
    const diffId = diffIds.get(e.table);
    const inRange = inDiff.has(`${e.table}\u0000${e.correction}`);
    const show = diffId && inRange ? `<br><a href="#${diffId}" data-show-correction="${h(e.correction)}">show its cells in the diff</a>` : '';
    return `<tr><th scope="row"><code>${h(e.correction)}</code><br><small>${h(e.table)}</small></th><td>${h(e.reason)}</td><td>${approval}</td><td>${approver}</td><td>${committed}</td><td>${changed.length ? changed.join('<br>') : 'nothing'}${show}</td></tr>`;
  });
  return `<section id="audit" aria-labelledby="audit-h">
<h2 id="audit-h">Audit trail</h2>
<p>Every correction at <code>${h(short(data.range.head))}</code>, in the order it applies.</p>
${rows.length ? `<table><caption>Corrections, their decisions and what they changed</caption>
<thead><tr><th scope="col">Correction</th><th scope="col">Reason</th><th scope="col">Approval</th><th scope="col">Approver</th><th scope="col">Committed</th><th scope="col">Cells changed</th></tr></thead>
<tbody>
${rows.join('\n')}
</tbody></table>` : '<p>No corrections.</p>'}
</section>`;
}

function renderNotes(notes: readonly ApprovalNote[]): string {
  const articles = notes.map(
    (n) => `<article class="note" id="note-${h(n.id)}" aria-labelledby="note-${h(n.id)}-h">
<h3 id="note-${h(n.id)}-h">${h(n.id)}: ${h(n.approves)}</h3>
<p>Approved by <strong>${h(n.approver)}</strong>${n.role ? ` (${h(n.role)})` : ''} on ${h(n.date)}. <small><code>${h(n.file)}</code></small></p>
<p class="note-evidence">${h(n.evidence)}</p>
</article>`,
  );
  return `<section id="notes" aria-labelledby="notes-h">
<h2 id="notes-h">Approval notes</h2>
${articles.length ? articles.join('\n') : '<p>No approval notes.</p>'}
</section>`;
}
