/**
 * Diff benchmark: `errata diff` on two deliveries of N rows x 20 columns (default 10,000,000 rows,
 * about 2 GB together) that differ by known amounts, measured against these references:
 *
 *   1. DuckDB alone reading both files: one `SELECT count(*), <hash of every column> FROM read_csv(...)`
 *      per file (target: the diff takes at most 1.5x that);
 *   2. the diff's peak memory, the child's maximum resident set size (target: at most 2 GB);
 *   3. `git diff --no-index --stat OLD NEW` on the same pair (target: errata at least 3x faster; on the
 *      2,000,000-row pair, errata no slower), capped by a timeout;
 *   4. `errata diff HEAD~1..HEAD` in a git repository whose second commit replaces OLD with NEW, run twice:
 *      the second run reads the parsed deliveries from .errata/cache (target: at most 0.3x the first).
 *
 *   npx tsc -p . && npx tsx bench/diff.ts [--rows N] [--seed S] [--runs R] [--revision-rows N]
 *                                         [--git-timeout MINUTES] [--skip files,git,revision]
 *
 * The revision diff runs on at most 2,000,000 rows unless --revision-rows says otherwise (it builds
 * both ends twice, which at full size takes long); the line with its figures says which size it used.
 * The deliveries are generated once under bench/out/ (see diff-data.ts) and reused. Every errata run is
 * the real command line in a child process, so its time includes start-up. With --runs R the file diff
 * and the DuckDB reference run R times each and the medians are reported. The summary errata prints is
 * checked against what the generator planted.
 */
import { spawn, spawnSync } from 'node:child_process';
import { createReadStream, existsSync, linkSync, copyFileSync, mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { DuckDBInstance } from '@duckdb/node-api';
import { COLUMNS, KEY, ensurePair, type DiffPair, type Planted } from './diff-data.js';
import { log, median, positiveWhole, runMeasured, type Run } from './measure.js';

const BENCH_DIR = path.dirname(fileURLToPath(import.meta.url));
const REPO_ROOT = path.resolve(BENCH_DIR, '..');
const OUT_DIR = path.join(BENCH_DIR, 'out');
const CLI = path.join(REPO_ROOT, 'bin', 'errata.js');

const TARGET_BASELINE_RATIO = 1.5;
const TARGET_PEAK_BYTES = 2e9;
const TARGET_GIT_SPEEDUP = 3;
const GIT_SPEEDUP_ROWS = 10_000_000;
const GIT_NO_SLOWER_ROWS = 2_000_000;
const TARGET_CACHE_RATIO = 0.3;
const TABLE = 'visits';
/** The revision diff builds both ends twice; above this many rows it runs on a smaller pair unless told. */
const DEFAULT_REVISION_ROWS = 2_000_000;

interface Args {
  rows: number;
  seed: number;
  runs: number;
  revisionRows: number | null;
  gitTimeoutMinutes: number;
  skip: Set<string>;
}

function parseArgs(argv: string[]): Args {
  const args: Args = { rows: 10_000_000, seed: 20260201, runs: 1, revisionRows: null, gitTimeoutMinutes: 20, skip: new Set() };
  for (let i = 0; i < argv.length; i += 1) {
    const [flag, inline] = argv[i].split('=', 2);
    const text = () => inline ?? argv[++i] ?? '';
    const whole = (name: string) => positiveWhole(text(), name);
    if (flag === '--rows') args.rows = whole('--rows');
    else if (flag === '--seed') args.seed = whole('--seed');
    else if (flag === '--runs') args.runs = whole('--runs');
    else if (flag === '--revision-rows') args.revisionRows = whole('--revision-rows');
    else if (flag === '--git-timeout') args.gitTimeoutMinutes = whole('--git-timeout');
    else if (flag === '--skip') for (const part of text().split(',')) args.skip.add(part.trim());
    else throw new Error(`unknown option ${argv[i]} (known: --rows N, --seed S, --runs R, --revision-rows N, --git-timeout MINUTES, --skip files,git,revision)`);
  }
  for (const part of args.skip) if (!['files', 'git', 'revision'].includes(part)) throw new Error(`--skip takes files, git and/or revision, not "${part}"`);
  return args;
}

const seconds = (ms: number) => ms / 1000;
const count = (n: number) => n.toLocaleString('en-US');
const memory = (bytes: number) => `${(bytes / 1e6).toFixed(0)} MB (${(bytes / 2 ** 20).toFixed(0)} MiB)`;
const line = (label: string, value: string) => console.log(`${label.padEnd(40)} ${value}`);
const verdict = (met: boolean, text: string) => console.log(`TARGET ${met ? 'MET    ' : 'NOT MET'} ${text}`);

/** Read the files once so every contender starts from a warm page cache. */
async function warm(files: string[]): Promise<void> {
  for (const file of files) {
    for await (const _ of createReadStream(file, { highWaterMark: 1 << 23 })) {
      /* discard */
    }
  }
}

function errata(args: string[], cwd: string): Promise<Run> {
  return runMeasured(process.execPath, [CLI, ...args], { cwd, reportDir: OUT_DIR });
}

interface Summary {
  rows: { added: number; removed: number; changed: number; unchanged: number };
  cells: { changed: number };
  columns: { added: string[]; removed: string[]; retyped: string[] };
}

function parseSummary(run: Run, what: string): Summary {
  if (run.code !== 0) throw new Error(`${what} exited with ${run.code}\n${run.stdout}${run.stderr}`);
  try {
    return JSON.parse(run.stdout) as Summary;
  } catch {
    throw new Error(`${what} did not print one JSON object:\n${run.stdout.slice(0, 2000)}`);
  }
}

/** Differences between the summary and what was planted; empty when they agree. */
function mismatches(summary: Summary, planted: Planted): string[] {
  const expected: Array<[string, number | string, number | string]> = [
    ['rows.added', summary.rows.added, planted.added],
    ['rows.removed', summary.rows.removed, planted.removed],
    ['rows.changed', summary.rows.changed, planted.changedRows],
    ['rows.unchanged', summary.rows.unchanged, planted.unchangedRows],
    ['cells.changed', summary.cells.changed, planted.changedCells],
    ['columns.added', summary.columns.added.join(','), ''],
    ['columns.removed', summary.columns.removed.join(','), ''],
    ['columns.retyped', summary.columns.retyped.join(','), ''],
  ];
  return expected.filter(([, got, want]) => got !== want).map(([name, got, want]) => `${name} ${got} (planted ${want === '' ? 'none' : want})`);
}

// ---------------------------------------------------------------------------------------------
// DuckDB alone

const quote = (s: string) => `'${s.replaceAll("'", "''")}'`;

/** One query per file: the row count and a hash of every column, as DuckDB reads the CSV by itself. */
async function baseline(pair: DiffPair): Promise<{ ms: number; cpuS: number; perFile: number[]; rows: number[] }> {
  const started = performance.now();
  const cpu = process.cpuUsage();
  const instance = await DuckDBInstance.create(':memory:');
  const connection = await instance.connect();
  const perFile: number[] = [];
  const rows: number[] = [];
  try {
    const hashes = COLUMNS.map((c, i) => `bit_xor(hash("${c}")) AS h${i}`).join(', ');
    for (const file of [pair.oldFile, pair.newFile]) {
      const t = performance.now();
      const reader = await connection.runAndReadAll(`SELECT count(*) AS n, ${hashes} FROM read_csv(${quote(file)})`);
      perFile.push(performance.now() - t);
      rows.push(Number(reader.getRowObjectsJS()[0].n));
    }
  } finally {
    connection.closeSync();
    instance.closeSync();
  }
  const used = process.cpuUsage(cpu);
  return { ms: performance.now() - started, cpuS: (used.user + used.system) / 1e6, perFile, rows };
}

// ---------------------------------------------------------------------------------------------
// A git repository whose second commit replaces the OLD delivery with the NEW one

function gitCli(cwd: string, args: string[]): string {
  const result = spawnSync('git', ['-c', 'user.name=Bench Author', '-c', 'user.email=bench@example.org', ...args], { cwd, encoding: 'utf8' });
  if (result.status !== 0) throw new Error(`git ${args.join(' ')} failed: ${result.stderr}`);
  return result.stdout;
}

/** Hard-link when possible (the deliveries are never written to), else copy. */
function place(from: string, to: string): void {
  rmSync(to, { force: true });
  mkdirSync(path.dirname(to), { recursive: true });
  try {
    linkSync(from, to);
  } catch {
    copyFileSync(from, to);
  }
}

function ensureRevisionRepo(pair: DiffPair, rows: number, seed: number): { root: string; reused: boolean; seconds: number } {
  const root = path.join(OUT_DIR, `diff-revisions-${rows}-s${seed}`);
  const stamp = `${root}.json`;
  const fingerprint = JSON.stringify({ version: 1, rows, seed, planted: pair.planted });
  if (existsSync(stamp) && readFileSync(stamp, 'utf8') === fingerprint && existsSync(path.join(root, '.git'))) return { root, reused: true, seconds: 0 };
  const started = performance.now();
  rmSync(root, { recursive: true, force: true });
  rmSync(stamp, { force: true });
  mkdirSync(root, { recursive: true });
  gitCli(root, ['init', '-q', '-b', 'main']);
  writeFileSync(path.join(root, '.gitignore'), '.errata/\n');
  writeFileSync(
    path.join(root, 'errata.yaml'),
    `# errata project (generated for benchmarks; invented data)\ntables:\n  ${TABLE}:\n    raw: raw/${TABLE}\n    key: ${KEY}\n`,
  );
  const delivery = path.join(root, 'raw', TABLE, 'delivery.csv');
  place(pair.oldFile, delivery);
  gitCli(root, ['add', '-A']);
  gitCli(root, ['commit', '-q', '-m', 'First delivery']);
  place(pair.newFile, delivery);
  gitCli(root, ['add', '-A']);
  gitCli(root, ['commit', '-q', '-m', 'Second delivery replaces the first']);
  writeFileSync(stamp, fingerprint);
  return { root, reused: false, seconds: (performance.now() - started) / 1000 };
}

// ---------------------------------------------------------------------------------------------

interface FileFigures {
  diffS: number;
  baselineS: number;
  peak: number | null;
  mismatches: string[];
}

/** errata diff --files and DuckDB alone, alternating when run several times. */
async function fileDiff(pair: DiffPair, runs: number): Promise<FileFigures> {
  const p = pair.planted;
  const diffArgs = ['diff', '--files', pair.oldFile, pair.newFile, '--key', KEY, '--format', 'json', '--summary'];
  const diffRuns: Run[] = [];
  const baselines: Array<Awaited<ReturnType<typeof baseline>>> = [];
  let summary: Summary | null = null;
  for (let run = 1; run <= runs; run += 1) {
    log(`run ${run}/${runs}: errata diff --files …`);
    const result = await errata(diffArgs, OUT_DIR);
    summary = parseSummary(result, 'errata diff --files');
    diffRuns.push(result);
    log(`  ${seconds(result.ms).toFixed(2)} s; DuckDB alone …`);
    baselines.push(await baseline(pair));
    log(`  ${seconds(baselines[baselines.length - 1].ms).toFixed(2)} s`);
  }
  const diffS = seconds(median(diffRuns.map((r) => r.ms)));
  const baselineS = seconds(median(baselines.map((b) => b.ms)));
  const cpus = diffRuns.map((r) => r.cpuS).filter((x): x is number => x !== null);
  const diffCpuS = cpus.length ? median(cpus) : null;
  const baselineCpuS = median(baselines.map((b) => b.cpuS));
  const peaks = diffRuns.map((r) => r.peakRss).filter((x): x is number => x !== null);
  const peak = peaks.length ? Math.max(...peaks) : null;
  const found = mismatches(summary!, p);
  const of = runs > 1 ? ` (median of ${runs})` : '';
  const each = (values: number[]) => (values.length > 1 ? `; runs: ${values.map((v) => seconds(v).toFixed(2)).join(', ')}` : '');
  line('errata diff --files seconds', `${diffS.toFixed(2)}${of}${each(diffRuns.map((r) => r.ms))}`);
  line('errata diff rows per second', count(Math.round((p.oldRows + p.newRows) / diffS)));
  line('errata diff summary', JSON.stringify(summary));
  line('summary against planted', found.length ? `MISMATCH: ${found.join('; ')}` : 'matches');
  line('errata diff peak memory', peak === null ? 'not measured' : `${memory(peak)} max RSS (${diffRuns[0].rssSource})`);
  const last = baselines[baselines.length - 1];
  line('DuckDB alone seconds (both files)', `${baselineS.toFixed(2)}${of}${each(baselines.map((b) => b.ms))} (last run: old ${seconds(last.perFile[0]).toFixed(2)} s, new ${seconds(last.perFile[1]).toFixed(2)} s)`);
  if (last.rows[0] !== p.oldRows || last.rows[1] !== p.newRows) line('DuckDB alone row counts', `UNEXPECTED: ${last.rows.join(' / ')}`);
  line('ratio diff / DuckDB alone', (diffS / baselineS).toFixed(2));
  if (diffCpuS !== null) {
    line('CPU seconds: diff / DuckDB alone', `${diffCpuS.toFixed(2)} / ${baselineCpuS.toFixed(2)} = ${(diffCpuS / baselineCpuS).toFixed(2)} (user + system; less disturbed by other load)`);
  }
  return { diffS, baselineS, peak, mismatches: found };
}

interface GitFigures {
  s: number;
  timedOut: boolean;
}

async function gitDiff(pair: DiffPair, timeoutMinutes: number, errataS: number | null): Promise<GitFigures> {
  const timeoutMs = timeoutMinutes * 60_000;
  // Above core.bigFileThreshold (512 MiB by default) git calls a file binary and compares nothing;
  // raise it and say --text so that git compares the lines, as a reviewer would need.
  const gitArgs = ['-c', 'core.bigFileThreshold=64g', 'diff', '--no-index', '--text', '--stat', pair.oldFile, pair.newFile];
  log(`git diff --no-index --text --stat (capped at ${timeoutMinutes} min) …`);
  const run = await runMeasured('git', gitArgs, { cwd: OUT_DIR, reportDir: OUT_DIR, timeoutMs });
  if (!run.timedOut && run.code !== 0 && run.code !== 1) throw new Error(`git diff exited with ${run.code}: ${run.stderr}`);
  const s = seconds(run.ms);
  line('git diff --no-index --stat seconds', run.timedOut ? `more than ${(timeoutMs / 1000).toFixed(0)} (HIT THE CAP, killed)` : s.toFixed(2));
  if (!run.timedOut) line('git diff --stat said', run.stdout.trim().split('\n').pop() ?? '');
  if (run.peakRss !== null) line('git diff peak memory', memory(run.peakRss));
  if (run.cpuS !== null) line('git diff CPU seconds', run.cpuS.toFixed(2));
  if (errataS !== null) line('speed-up errata over git diff', `${(s / errataS).toFixed(2)}x${run.timedOut ? ' (at least)' : ''}`);
  return { s, timedOut: run.timedOut };
}

interface CacheFigures {
  first: number;
  second: number;
  rows: number;
  mismatches: string[];
}

/** The revision diff, cold and then with the parsed deliveries cached. */
async function revisionDiff(pair: DiffPair, rows: number, seed: number, note: string): Promise<CacheFigures> {
  log(`revision diff on ${count(rows)} rows: preparing the repository …`);
  const repo = ensureRevisionRepo(pair, rows, seed);
  log(`  ${repo.reused ? 'reused' : `committed in ${repo.seconds.toFixed(1)} s`}: ${path.relative(REPO_ROOT, repo.root)}`);
  rmSync(path.join(repo.root, '.errata'), { recursive: true, force: true });
  const revArgs = ['diff', 'HEAD~1..HEAD', '--format', 'json', '--summary'];
  log('  errata diff HEAD~1..HEAD (cold) …');
  const first = await errata(revArgs, repo.root);
  const firstSummary = parseSummary(first, 'errata diff HEAD~1..HEAD');
  log(`  ${seconds(first.ms).toFixed(2)} s; again (cached) …`);
  const second = await errata(revArgs, repo.root);
  const secondSummary = parseSummary(second, 'errata diff HEAD~1..HEAD (cached)');
  const found = [...mismatches(firstSummary, pair.planted), ...mismatches(secondSummary, pair.planted).map((m) => `cached: ${m}`)];
  const figures = { first: seconds(first.ms), second: seconds(second.ms), rows, mismatches: found };
  line('revision diff rows', `${count(rows)}${note}`);
  const extra = (run: Run) => [run.cpuS !== null ? `CPU ${run.cpuS.toFixed(2)} s` : '', run.peakRss ? `peak ${memory(run.peakRss)}` : ''].filter(Boolean).join(', ');
  line('revision diff first run seconds', `${figures.first.toFixed(2)} (${extra(first)})`);
  line('revision diff second run seconds', `${figures.second.toFixed(2)} (${extra(second)})`);
  line('ratio second / first', (figures.second / figures.first).toFixed(2));
  line('revision summaries against planted', found.length ? `MISMATCH: ${found.join('; ')}` : 'both match');
  return figures;
}

async function main(): Promise<void> {
  const args = parseArgs(process.argv.slice(2));
  if (!existsSync(path.join(REPO_ROOT, 'dist', 'cli', 'main.js'))) throw new Error('dist/ is missing: compile first with `npx tsc -p .`');
  mkdirSync(OUT_DIR, { recursive: true });
  const wanted = (part: string) => !args.skip.has(part);

  log(`preparing the ${count(args.rows)}-row pair under ${path.relative(REPO_ROOT, OUT_DIR)}/ …`);
  const pair = ensurePair(OUT_DIR, args.rows, args.seed);
  const p = pair.planted;
  line('rows (old / new)', `${count(p.oldRows)} / ${count(p.newRows)}`);
  line('columns', String(COLUMNS.length));
  line('file sizes (old + new)', `${memory(pair.oldBytes)} + ${memory(pair.newBytes)} = ${((pair.oldBytes + pair.newBytes) / 1e9).toFixed(2)} GB`);
  line('planted', `${count(p.added)} added, ${count(p.removed)} removed, ${count(p.changedRows)} changed rows, ${count(p.changedCells)} changed cells, ${count(p.movedRows)} moved`);
  line('generation', pair.reused ? 'reused from disk' : `${pair.seconds.toFixed(1)} s`);
  if (wanted('files') || wanted('git')) await warm([pair.oldFile, pair.newFile]);

  const files = wanted('files') ? await fileDiff(pair, args.runs) : null;
  const git = wanted('git') ? await gitDiff(pair, args.gitTimeoutMinutes, files?.diffS ?? null) : null;
  let cache: CacheFigures | null = null;
  if (wanted('revision')) {
    const rows = args.revisionRows ?? Math.min(args.rows, DEFAULT_REVISION_ROWS);
    const note = rows === args.rows ? '' : args.revisionRows ? ' (set by --revision-rows)' : ` (smaller than the file diff: the default cap; --revision-rows ${count(args.rows)} for the full size)`;
    cache = await revisionDiff(rows === args.rows ? pair : ensurePair(OUT_DIR, rows, args.seed), rows, args.seed, note);
  }

  console.log('');
  const skipped = (what: string, flag: string) => console.log(`TARGET SKIPPED ${what} (--skip ${flag})`);
  if (files) console.log(`CHECK   ${files.mismatches.length ? 'FAILED ' : 'PASSED '} errata diff --files summary equals what was planted`);
  if (cache) console.log(`CHECK   ${cache.mismatches.length ? 'FAILED ' : 'PASSED '} errata diff HEAD~1..HEAD summaries equal what was planted`);
  if (files) {
    const ratio = files.diffS / files.baselineS;
    verdict(ratio <= TARGET_BASELINE_RATIO, `diff takes at most ${TARGET_BASELINE_RATIO}x DuckDB alone reading both files: ${ratio.toFixed(2)}x`);
    verdict(files.peak !== null && files.peak <= TARGET_PEAK_BYTES, `diff peak memory at most 2 GB: ${files.peak === null ? 'not measured' : memory(files.peak)}`);
  } else {
    skipped('diff against DuckDB alone', 'files');
    skipped('diff peak memory', 'files');
  }
  if (files && git) {
    const speedUp = git.s / files.diffS;
    const capped = git.timedOut ? ' (git hit the cap, so at least this)' : '';
    // The issue sets each git target on one size of pair: 3x faster on 10,000,000 rows, no slower on
    // 2,000,000; on other sizes both are printed as figures only.
    const judged = (target: number, text: string, met: boolean) =>
      args.rows === target ? verdict(met, text) : console.log(`FIGURE         ${text} (the target is set for the ${count(target)}-row pair)`);
    judged(GIT_SPEEDUP_ROWS, `errata at least ${TARGET_GIT_SPEEDUP}x faster than git diff: ${speedUp.toFixed(2)}x${capped}`, speedUp >= TARGET_GIT_SPEEDUP);
    judged(GIT_NO_SLOWER_ROWS, `errata no slower than git diff: ${files.diffS.toFixed(2)} s against ${git.s.toFixed(2)} s${capped}`, speedUp >= 1);
  } else skipped('comparisons with git diff', files ? 'git' : 'files');
  if (cache) {
    const ratio = cache.second / cache.first;
    verdict(ratio <= TARGET_CACHE_RATIO, `cached revision diff at most ${TARGET_CACHE_RATIO}x the first run (${count(cache.rows)} rows): ${ratio.toFixed(2)}x`);
  } else skipped('revision diff cache', 'revision');
}

main().catch((error) => {
  console.error(error instanceof Error ? error.message : error);
  process.exitCode = 1;
});
