/**
 * Report benchmark: how large `errata report` pages get for a 1,000,000-row diff, and how fast Debian's
 * Chromium opens them from disk. Targets: at most 20 MB, and loaded (diff table drawn) within 5 s.
 *
 *   npx tsc -p . && npx tsx bench/report.ts [--rows N] [--seed S] [--skip cli,synthetic]
 *
 * Two pages are measured:
 *
 *   1. cli: the real command line on the 1,000,000-row benchmark project (bench/project.ts), copied to
 *      bench/out/report-N-sS with two more commits (corrections taken out, then put back), so
 *      `errata report --range HEAD~1..HEAD` diffs the clean builds of N rows with and without every
 *      correction. Its time and peak memory are printed too.
 *   2. synthetic: the worst case for size, every one of N rows changed, fed straight to the renderer as
 *      N changed cells (far more than any page embeds; the page says how many it left out).
 *
 * Each page is opened in headless Chromium (/usr/bin/chromium through playwright-core): the time from
 * navigation to the load event (the page's script has drawn the first page of the diff by then) and the
 * time until the diff table's first row is in the DOM, both measured from the bench's side, browser
 * start-up excluded.
 */
import { cpSync, existsSync, mkdirSync, mkdtempSync, readFileSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { performance } from 'node:perf_hooks';
import { pathToFileURL } from 'node:url';
import { chromium } from 'playwright-core';
import type { CellChange } from '../src/diff/types.js';
import { commitAll } from '../src/git/repo.js';
import type { ColumnComparison, ColumnProfile, Histogram } from '../src/profile/types.js';
import { REPORT_CELL_LIMIT, renderReportHtml } from '../src/render/report-html.js';
import type { ReportData } from '../src/report/types.js';
import { log, positiveWhole, runMeasured } from './measure.js';
import { OUT_DIR, REPO_ROOT, ensureProject } from './project.js';
import { splitmix32 } from './splitmix.js';

const CHROMIUM = '/usr/bin/chromium';
const CLI = path.join(REPO_ROOT, 'bin', 'errata.js');
const TARGET_BYTES = 20e6;
const TARGET_LOAD_MS = 5000;
const AUTHOR = { name: 'Bench Author', email: 'bench@example.org', timezoneOffset: 0 };

interface Args {
  rows: number;
  seed: number;
  skip: Set<string>;
}

function parseArgs(argv: string[]): Args {
  const args: Args = { rows: 1_000_000, seed: 20260115, skip: new Set() };
  for (let i = 0; i < argv.length; i += 1) {
    const [flag, inline] = argv[i].split('=', 2);
    const text = () => inline ?? argv[++i] ?? '';
    const whole = (name: string) => positiveWhole(text(), name);
    if (flag === '--rows') args.rows = whole('--rows');
    else if (flag === '--seed') args.seed = whole('--seed');
    else if (flag === '--skip') for (const part of text().split(',')) args.skip.add(part.trim());
    else throw new Error(`unknown option ${argv[i]} (known: --rows N, --seed S, --skip cli,synthetic)`);
  }
  return args;
}

const mb = (bytes: number) => `${(bytes / 1e6).toFixed(2)} MB`;

/** The benchmark project plus two commits: its corrections taken out, then put back. */
async function reportProject(rows: number, seed: number): Promise<string> {
  const source = await ensureProject({ rows, seed, log });
  const root = path.join(OUT_DIR, `report-${rows}-s${seed}`);
  const stamp = `${root}.json`;
  if (existsSync(stamp) && existsSync(root) && readFileSync(stamp, 'utf8') === source.root) return root;
  rmSync(root, { recursive: true, force: true });
  log(`copying ${path.relative(REPO_ROOT, source.root)} to ${path.relative(REPO_ROOT, root)}`);
  // Built outputs are left behind (they would be committed); the parse cache is content-addressed.
  cpSync(source.root, root, { recursive: true, filter: (file) => !/[/\\](clean|tmp)$/.test(file) });
  const corrections = path.join(root, 'corrections');
  const aside = path.join(OUT_DIR, `corrections-aside-${process.pid}`);
  renameSync(corrections, aside);
  await commitAll(root, 'Take the corrections out', { ...AUTHOR, timestamp: 1_767_312_000 });
  renameSync(aside, corrections);
  await commitAll(root, 'Put the corrections back', { ...AUTHOR, timestamp: 1_767_398_400 });
  writeFileSync(stamp, source.root);
  return root;
}

interface Opened {
  loadMs: number;
  firstRowMs: number;
  shownRows: number;
}

async function openInChromium(file: string): Promise<Opened> {
  const profile = mkdtempSync(path.join(tmpdir(), 'errata-bench-chromium-'));
  const context = await chromium.launchPersistentContext(profile, {
    executablePath: CHROMIUM,
    headless: true,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
  });
  try {
    const page = context.pages()[0] ?? (await context.newPage());
    const started = performance.now();
    let firstRowMs = 0;
    const firstRow = page.waitForSelector('section.diff table.cells tbody tr', { state: 'attached', timeout: 120_000 }).then(() => {
      firstRowMs = performance.now() - started;
    });
    await page.goto(pathToFileURL(file).href, { waitUntil: 'load', timeout: 120_000 });
    const loadMs = performance.now() - started;
    await firstRow;
    const shownRows = await page.locator('section.diff table.cells tbody tr').count();
    return { loadMs, firstRowMs, shownRows };
  } finally {
    await context.close();
    rmSync(profile, { recursive: true, force: true });
  }
}

function report(label: string, file: string, opened: Opened): boolean {
  const bytes = statSync(file).size;
  const line = (name: string, value: string) => console.log(`${`${label} ${name}`.padEnd(34)} ${value}`);
  line('file size', `${mb(bytes)} (${path.relative(REPO_ROOT, file)})`);
  line('Chromium: load event', `${(opened.loadMs / 1000).toFixed(2)} s`);
  line('Chromium: first diff row', `${(opened.firstRowMs / 1000).toFixed(2)} s (${opened.shownRows} rows on the page)`);
  const met = bytes <= TARGET_BYTES && Math.max(opened.loadMs, opened.firstRowMs) <= TARGET_LOAD_MS;
  console.log(`${met ? 'TARGET MET' : 'TARGET MISSED'}: ${label} page ${mb(bytes)} (at most 20 MB), opened in ${(Math.max(opened.loadMs, opened.firstRowMs) / 1000).toFixed(2)} s (at most 5 s)`);
  return met;
}

// ── the synthetic worst case ───────────────────────────────────────────────────────────────────────

const CHANGED_COLUMNS = ['height_cm', 'weight_kg', 'systolic', 'diastolic', 'glucose_mmol', 'score', 'age', 'site'];

function histogram(random: () => number, lo: number, hi: number, n: number): Histogram {
  const k = Math.ceil(Math.log2(n)) + 1;
  const width = (hi - lo) / k;
  return { rule: 'sturges', bins: Array.from({ length: k }, (_, i) => ({ from: lo + i * width, to: i === k - 1 ? hi : lo + (i + 1) * width, count: Math.round(n / k * (0.5 + random())) })) };
}

function columnProfile(name: string, n: number, numeric: boolean, random: () => number): ColumnProfile {
  const codes = ['HB01', 'HB02', 'HB03', 'HB04', 'HB05', 'HB06'];
  return {
    name, type: numeric ? 'number' : 'string', n, missing: 0, distinct: numeric ? n : codes.length,
    mean: numeric ? 50 : null, sd: numeric ? 10 : null, min: numeric ? 0 : null, q1: numeric ? 40 : null, median: numeric ? 50 : null, q3: numeric ? 60 : null, max: numeric ? 100 : null,
    top: [], histogram: numeric ? histogram(random, 0, 100, n) : null, extremes: null,
    frequencies: numeric ? null : codes.map((value) => ({ value, label: null, count: Math.round(n / codes.length), percent: 16.67, cumulative: 0 })),
    flags: [],
  };
}

/** Every one of `rows` rows changed in one cell, plus a profile of 20 variables and 30 corrections. */
function syntheticReport(rows: number, seed: number): ReportData {
  const random = splitmix32(seed);
  const cells: CellChange[] = new Array(rows);
  for (let i = 0; i < rows; i += 1) {
    const old = (random() * 200).toFixed(1);
    cells[i] = { key: `P${String(i + 1).padStart(7, '0')}`, column: CHANGED_COLUMNS[i % CHANGED_COLUMNS.length], old, new: (Number(old) / 2.54).toFixed(1), correction: `${String((i % 30) + 1).padStart(4, '0')}-bench.yaml` };
  }
  const columns: ColumnComparison[] = Array.from({ length: 20 }, (_, i) => {
    const name = `v${i + 1}`;
    return { name, rawName: null, raw: columnProfile(name, rows, i % 3 !== 0, random), clean: columnProfile(name, rows, i % 3 !== 0, random), resolved: [], introduced: [] };
  });
  const head = 'b'.repeat(40);
  return {
    range: { base: 'a'.repeat(40), head, choice: 'given' },
    tables: [{ name: 'visits', comparison: { table: 'visits', rows: { raw: rows, clean: rows }, key: ['participant_id'], columns }, discrepancies: [{ rule: 'maximum', severity: 'error', raw: 1234, clean: 0 }] }],
    diffs: [{
      table: 'visits', key: ['participant_id'],
      summary: { rows: { added: 0, removed: 0, changed: rows, unchanged: 0 }, cells: { changed: rows }, columns: { added: [], removed: [], retyped: [] } },
      retyped: [], renamed: [], addedKeys: [], removedKeys: [], cells, complete: true,
    }],
    audit: Array.from({ length: 30 }, (_, i) => ({
      table: 'visits', correction: `${String(i + 1).padStart(4, '0')}-bench.yaml`, file: `corrections/visits/${String(i + 1).padStart(4, '0')}-bench.yaml`, reason: 'Benchmark correction',
      approval: `N-${i + 1}`, approver: 'bench', approverName: 'Bench Approver', approvedOn: '2026-01-20', commit: head, author: 'Bench Author', date: '2026-01-21T00:00:00Z',
      steps: 1, cellsChanged: Math.round(rows / 30), cellsByColumn: { score: Math.round(rows / 30) }, rowsDeleted: 0, columnEvents: [],
    })),
    notes: Array.from({ length: 30 }, (_, i) => ({ id: `N-${i + 1}`, file: `notes/N-${i + 1}.md`, approver: 'bench', date: '2026-01-20', approves: 'a benchmark change', evidence: 'Benchmark evidence.' })),
    review: { base: 'a'.repeat(40), head, commits: 1, cellsChanged: rows, cellsByCorrection: rows, cellsByDelivery: 0, correctionsReviewed: [], findings: [] },
  };
}

async function main(): Promise<void> {
  const args = parseArgs(process.argv.slice(2));
  if (!existsSync(CHROMIUM)) throw new Error(`${CHROMIUM} is missing: install Debian's chromium (apt-get install chromium)`);
  if (!existsSync(path.join(REPO_ROOT, 'dist', 'cli', 'main.js'))) throw new Error('dist/ is missing: compile first with `npx tsc -p .`');
  mkdirSync(OUT_DIR, { recursive: true });
  let allMet = true;
  console.log(`embedded cell limit                ${REPORT_CELL_LIMIT.toLocaleString('en-US')} changed cells per page`);

  if (!args.skip.has('cli')) {
    const root = await reportProject(args.rows, args.seed);
    const file = path.join(OUT_DIR, `report-${args.rows}-cli.html`);
    log(`errata report --range HEAD~1..HEAD on ${args.rows.toLocaleString('en-US')} rows…`);
    const run = await runMeasured(process.execPath, [CLI, 'report', '--range', 'HEAD~1..HEAD', '--out', file], { cwd: root, reportDir: OUT_DIR, timeoutMs: 60 * 60_000 });
    if (run.code !== 0) throw new Error(`errata report failed (${run.code}):\n${run.stderr}`);
    const changed = /<dt>Cells changed in range<\/dt><dd>([\d,]+)<\/dd>/.exec(readFileSync(file, 'utf8'))?.[1] ?? '?';
    console.log(`cli rows diffed                     ${args.rows.toLocaleString('en-US')} (cells changed: ${changed})`);
    console.log(`cli errata report seconds           ${(run.ms / 1000).toFixed(1)} (peak memory ${run.peakRss === null ? 'not measured' : `${(run.peakRss / 2 ** 20).toFixed(0)} MiB`})`);
    allMet = report('cli', file, await openInChromium(file)) && allMet;
  }
  if (!args.skip.has('synthetic')) {
    const file = path.join(OUT_DIR, `report-${args.rows}-synthetic.html`);
    const started = performance.now();
    writeFileSync(file, renderReportHtml(syntheticReport(args.rows, args.seed)));
    console.log(`synthetic cells changed             ${args.rows.toLocaleString('en-US')} (rendered in ${((performance.now() - started) / 1000).toFixed(1)} s)`);
    allMet = report('synthetic', file, await openInChromium(file)) && allMet;
  }
  if (!allMet) process.exitCode = 1;
}

main().catch((error) => {
  console.error(error instanceof Error ? error.message : error);
  process.exitCode = 1;
});
