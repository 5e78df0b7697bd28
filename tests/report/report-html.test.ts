import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import type { CellChange, TableDiff } from '../../src/diff/types.js';
import type { ReportData } from '../../src/report/types.js';
import { embedJson } from '../../src/render/report-embed.js';
import { renderReportHtml } from '../../src/render/report-html.js';

const HOSTILE = ['</script><script>window.__pwned=1</script>', '<!--', '<img src=x onerror=alert(1)>', 'a & b', '\u2028line'];

function diffOf(cells: CellChange[], changed = cells.length): TableDiff {
  return {
    table: 'visits',
    key: ['pid'],
    summary: { rows: { added: 0, removed: 0, changed, unchanged: 10 }, cells: { changed }, columns: { added: [], removed: [], retyped: [] } },
    retyped: [],
    renamed: [],
    addedKeys: [],
    removedKeys: [],
    cells,
    complete: cells.length === changed,
  };
}

function report(diff: TableDiff): ReportData {
  return {
    range: { base: 'a'.repeat(40), head: 'b'.repeat(40), choice: 'given' },
    tables: [],
    diffs: [diff],
    audit: [],
    notes: [{ id: 'N-1', file: 'notes/N-1.md', approver: 'imarsh', date: '2026-01-01', approves: '<i>x</i>', evidence: '</p><script>bad()</script>' }],
    review: { base: 'a'.repeat(40), head: 'b'.repeat(40), commits: 1, cellsChanged: 0, cellsByCorrection: 0, cellsByDelivery: 0, correctionsReviewed: [], findings: [] },
  };
}

/** Script blocks as the HTML tokenizer sees them: from <script…> to the first </script (WHATWG HTML, script data state). */
function scriptBlocks(html: string): string[] {
  return [...html.matchAll(/<script\b[^>]*>([\s\S]*?)<\/script/gi)].map((m) => m[1]);
}

describe('report page', () => {
  it('embeds JSON that no </script> or <!-- in a value can end, and that parses back to the same values', () => {
    const text = embedJson({ values: HOSTILE });
    expect(text).not.toMatch(/[<>&\u2028\u2029]/);
    // JSON.parse is the independent reader here (ECMA-404 JSON).
    expect(JSON.parse(text)).toEqual({ values: HOSTILE });
  });

  it('shows every hostile cell value as escaped text and embeds it in one intact data block', () => {
    const cells = HOSTILE.map((v, i) => ({ key: `k${i}<`, column: 'comment', old: v, new: `${v}!`, correction: '0001-x.yaml' }));
    const html = renderReportHtml(report(diffOf(cells)));
    const blocks = scriptBlocks(html);
    // The page's own script and one data block; a value that ended a block early would add more.
    expect(blocks).toHaveLength(2);
    const data = JSON.parse(blocks.find((b) => b.startsWith('{'))!);
    expect(data.cells.map((c: unknown[]) => c[2])).toEqual(HOSTILE.map((v) => (v === '\u2028line' ? JSON.stringify(v) : v)));
    expect(html).not.toContain('<img');
    expect(html).not.toContain('<i>x</i>');
    expect(html).toContain('&lt;/script&gt;&lt;script&gt;window.__pwned=1&lt;/script&gt;');
    expect(html).toContain('&lt;/p&gt;&lt;script&gt;bad()&lt;/script&gt;');
  });

  it('allows only its own script by hash and nothing from outside', () => {
    const html = renderReportHtml(report(diffOf([])));
    const csp = /http-equiv="Content-Security-Policy" content="([^"]+)"/.exec(html)![1];
    expect(csp).toContain("default-src 'none'");
    const script = scriptBlocks(html).find((b) => !b.startsWith('{'))!;
    // The hash-source of CSP Level 2: base64 of the SHA-256 of the script's text.
    expect(csp).toContain(`'sha256-${createHash('sha256').update(script).digest('base64')}'`);
    expect(html).not.toMatch(/(src|href)="https?:/);
  });

  it('embeds changed cells up to the limit and says how many more there are and how to get them', () => {
    const cells = Array.from({ length: 30 }, (_, i) => ({ key: String(i), column: 'w', old: '1', new: '2', correction: null }));
    const html = renderReportHtml(report(diffOf(cells, 1_000_000)), { cellLimit: 25 });
    const data = JSON.parse(scriptBlocks(html).find((b) => b.startsWith('{'))!);
    expect(data.cells).toHaveLength(25);
    expect(html).toContain('999,975 more are not embedded');
    expect(html).toContain('errata diff aaaaaaa..bbbbbbb visits --format json');
  });

  it('links an audit entry to its cells only when the page holds some of them', () => {
    // 25 cells embedded of 30: the first 25 come from 0001-first, the last 5 from 0002-later, which
    // the page therefore does not hold.
    const cells = Array.from({ length: 30 }, (_, i) => ({ key: String(i), column: 'w', old: '1', new: '2', correction: i < 25 ? '0001-first.yaml' : '0002-later.yaml' }));
    const entry = (correction: string) => ({
      table: 'visits', correction, file: `corrections/visits/${correction}`, reason: 'r', approval: null, approver: null, approverName: null, approvedOn: null,
      commit: null, author: null, date: null, steps: 1, cellsChanged: 1, cellsByColumn: { w: 1 }, rowsDeleted: 0, columnEvents: [],
    });
    const data = { ...report(diffOf(cells)), audit: [entry('0001-first.yaml'), entry('0002-later.yaml')] };
    const html = renderReportHtml(data, { cellLimit: 25 });
    expect(html).toContain('data-show-correction="0001-first.yaml"');
    expect(html).not.toContain('data-show-correction="0002-later.yaml"');
    expect(renderReportHtml(data, { cellLimit: 30 })).toContain('data-show-correction="0002-later.yaml"');
  });

  it('marks old and new values with symbols and words, not colour alone, and uses real table headers', () => {
    const html = renderReportHtml(report(diffOf([{ key: '1', column: 'w', old: null, new: '', correction: null }])));
    expect(html).toContain('<th scope="col">Old (−)</th><th scope="col">New (+)</th>');
    expect(html).toMatch(/<td class="old"><span class="mark" aria-hidden="true">− <\/span>∅<\/td><td class="new"><span class="mark" aria-hidden="true">\+ <\/span>&quot;&quot;<\/td>/);
    expect(html).toContain('<caption>Changed cells of visits');
    expect(html).toContain('@media print');
  });
});
