import { readFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { commit, errata, removeDir, type CliResult } from '../helpers/project.js';
import { makeReportProject, rawCsv, ROWS } from './report-project.js';

/** The bars a report draws for one variable, as the page states them in data attributes. */
function barsOf(html: string, variable: string, side: 'raw' | 'clean'): Array<{ from: number; to: number; count: number }> {
  const figure = html.split('<figure class="variable"').find((f) => f.includes(`<figcaption><code>${variable}</code>`));
  if (!figure) throw new Error(`no figure for ${variable}`);
  return [...figure.matchAll(/data-side="(raw|clean)" data-from="([^"]+)" data-to="([^"]+)" data-count="(\d+)"/g)]
    .filter((m) => m[1] === side)
    .map((m) => ({ from: Number(m[2]), to: Number(m[3]), count: Number(m[4]) }));
}

/**
 * Equal-width bins by Sturges' rule, k = ⌈log₂ n⌉ + 1 (H. A. Sturges, "The choice of a class
 * interval", JASA 21, 1926), from the minimum to the maximum, each [from, to) and the last closed,
 * counted with plain JavaScript over the values.
 */
function sturgesBins(values: number[]): Array<{ from: number; to: number; count: number }> {
  const k = Math.ceil(Math.log2(values.length)) + 1;
  const min = Math.min(...values);
  const max = Math.max(...values);
  const width = (max - min) / k;
  const edges = Array.from({ length: k + 1 }, (_, i) => (i === k ? max : min + i * width));
  return edges.slice(0, -1).map((from, i) => ({
    from,
    to: edges[i + 1],
    count: values.filter((v) => v >= from && (i === k - 1 ? v <= edges[i + 1] : v < edges[i + 1])).length,
  }));
}

function column(csv: string, name: string): string[] {
  const [header, ...lines] = csv.trimEnd().split('\n');
  const index = header.split(',').indexOf(name);
  return lines.map((line) => line.split(',')[index]);
}

describe('errata report', () => {
  let root: string;
  let result: CliResult;
  let html: string;

  beforeAll(async () => {
    root = await makeReportProject();
    result = await errata(root, ['report', '--out', 'out/report.html']);
    html = readFileSync(path.join(root, 'out', 'report.html'), 'utf8');
  });

  afterAll(() => removeDir(root));

  it('writes one page and says where, by default covering the commits since just before the first correction', () => {
    expect(result.code).toBe(0);
    expect(result.stderr).toMatch(/wrote out\/report\.html \(\d+\.\d MB\)/);
    expect(html).toContain('(from just before the first correction to HEAD)');
    expect(html).not.toMatch(/(src|href)="https?:/);
  });

  it('draws the raw histogram with the bins of an independent Sturges count over the raw delivery', () => {
    const weights = column(rawCsv(), 'weight_kg').map(Number);
    expect(weights).toHaveLength(ROWS);
    const expected = sturgesBins(weights);
    const drawn = barsOf(html, 'weight_kg', 'raw');
    expect(drawn).toHaveLength(expected.length);
    drawn.forEach((bar, i) => {
      expect(bar.from).toBeCloseTo(expected[i].from, 9);
      expect(bar.to).toBeCloseTo(expected[i].to, 9);
      expect(bar.count).toBe(expected[i].count);
    });
  });

  it('draws the clean histogram with the bins of an independent Sturges count over the built clean file', async () => {
    expect((await errata(root, ['build'])).code).toBe(0);
    const weights = column(readFileSync(path.join(root, 'clean', 'visits.csv'), 'utf8'), 'weight_kg').map(Number);
    const expected = sturgesBins(weights);
    const drawn = barsOf(html, 'weight_kg', 'clean');
    expect(drawn.map((b) => b.count)).toEqual(expected.map((b) => b.count));
    drawn.forEach((bar, i) => expect(bar.from).toBeCloseTo(expected[i].from, 9));
  });

  it('gives the overview, the discrepancies by rule and the audit trail of the invented project', () => {
    // By hand from report-project.ts: 4 pound weights, 1 site spelling, 2 comments = 7 cells.
    expect(html).toMatch(/<dt>Cells changed in range<\/dt><dd>7<\/dd>/);
    expect(html).toMatch(/<dt>Rows \(clean, at head\)<\/dt><dd>40<\/dd>/);
    expect(html).toMatch(/<dt>Corrections applied<\/dt><dd>1<\/dd>/);
    expect(html).toContain('✓ passed');
    // Raw: pid 5's "eastfold" is outside the enum; the four pound weights exceed the maximum of 100.
    expect(html).toMatch(/<th scope="row"><code>enum<\/code><\/th><td>error<\/td><td class="num">1<\/td><td class="num">0<\/td>/);
    expect(html).toMatch(/<th scope="row"><code>maximum<\/code><\/th><td>error<\/td><td class="num">4<\/td><td class="num">0<\/td>/);
    expect(html).toContain('<a href="#note-N-0001">N-0001</a>');
    expect(html).toContain('<article class="note" id="note-N-0001"');
    expect(html).toContain('&lt;b&gt;Convert&lt;/b&gt;');
    expect(html).toContain('data-show-correction="0001-pounds-and-comments.yaml"');
  });

  it('embeds no more cells than --cell-limit and names the command that lists them all', async () => {
    const limited = await errata(root, ['report', '--out', 'small.html', '--cell-limit', '3', '--range', 'HEAD~1..HEAD']);
    expect(limited.code).toBe(0);
    const page = readFileSync(path.join(root, 'small.html'), 'utf8');
    expect(page).toContain('4 more are not embedded');
    expect(page).toContain('(the range asked for)');
  });

  it('reports a project without a codebook, saying there is nothing to count discrepancies against', async () => {
    removeDir(path.join(root, 'codebook'));
    await commit(root, 'Remove the codebook');
    const bare = await errata(root, ['report', '--out', 'bare.html', '--range', 'HEAD~2..HEAD']);
    expect(bare.code, bare.stderr).toBe(0);
    const page = readFileSync(path.join(root, 'bare.html'), 'utf8');
    expect(page).toContain('No codebook, so no discrepancy counts for visits.');
    // The audit trail is there all the same: the one correction, citing its note.
    expect(page).toContain('data-show-correction="0001-pounds-and-comments.yaml"');
    expect(page).toMatch(/<dt>Cells changed in range<\/dt><dd>7<\/dd>/);
  });

  it('refuses a range that is not BASE..HEAD and a limit that is not a whole number', async () => {
    const range = await errata(root, ['report', '--range', 'HEAD']);
    expect(range.code).toBe(2);
    expect(range.stderr).toContain('--range takes BASE..HEAD');
    const limit = await errata(root, ['report', '--cell-limit', 'many']);
    expect(limit.code).toBe(2);
  });
});
