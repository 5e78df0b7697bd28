/**
 * Where a file diff's time goes: runs what `errata diff --files OLD NEW --key id` runs, in this process,
 * timing every SQL statement the engine session runs, and prints the time by phase and the slowest
 * statements.
 *
 *   npx tsx bench/diff-profile.ts [--rows N] [--seed S] [--top K] [--memory-limit 2GB] [--revision]
 *
 * With --revision it runs `errata diff HEAD~1..HEAD` instead, twice (cold, then with the parsed
 * deliveries cached), in the repository bench/diff.ts prepares (run that first), and also times the
 * reads of git objects. Uses (or generates) the same pair of deliveries as bench/diff.ts.
 */
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { existsSync, rmSync } from 'node:fs';
import { diffRevisions } from '../src/diff/revision-diff.js';
import { diffFiles } from '../src/diff/file-diff.js';
import { RevisionTree } from '../src/git/tree.js';
import { Session } from '../src/engine/session.js';
import { KEY, ensurePair } from './diff-data.js';

const OUT_DIR = path.join(path.dirname(fileURLToPath(import.meta.url)), 'out');

interface Timing {
  phase: string;
  sql: string;
  ms: number;
}

const timings: Timing[] = [];
let phase = 'open';

function instrument(): void {
  const proto = Session.prototype as unknown as Record<string, (...args: unknown[]) => Promise<unknown>>;
  // `one` goes through `all`, so wrapping these four counts every statement exactly once.
  for (const method of ['run', 'runRaw', 'all', 'allRaw']) {
    const original = proto[method];
    proto[method] = async function (this: unknown, sql: unknown, ...rest: unknown[]) {
      const started = performance.now();
      try {
        return await original.call(this, sql, ...rest);
      } finally {
        timings.push({ phase, sql: String(sql), ms: performance.now() - started });
      }
    };
  }
}

/** Time the git object reads of a revision (file content for DuckDB, blob ids for the cache). */
function instrumentGit(): void {
  const proto = RevisionTree.prototype as unknown as Record<string, (...args: unknown[]) => Promise<unknown>>;
  for (const method of ['localPath', 'blobId', 'read', 'list']) {
    const original = proto[method];
    proto[method] = async function (this: unknown, ...args: unknown[]) {
      const started = performance.now();
      try {
        return await original.apply(this, args);
      } finally {
        timings.push({ phase, sql: `[git] RevisionTree.${method}(${args.map(String).join(', ')})`, ms: performance.now() - started });
      }
    };
  }
}

/** A short name for what a statement does, from its text. */
function kindOf(sql: string): string {
  const s = sql.replace(/\s+/g, ' ').trim();
  if (s.startsWith('[git] RevisionTree.localPath')) return 'git: unpack blob to a file';
  if (s.startsWith('[git] RevisionTree.blobId')) return 'git: blob id';
  if (s.startsWith('[git]')) return 'git: other reads';
  if (/read_csv\(/.test(s)) return 'read CSV as text';
  if (/read_parquet\(/.test(s)) return 'read cached Parquet';
  if (/^COPY .* FORMAT parquet/.test(s)) return 'write cache Parquet';
  if (/row_number\(\) OVER \(\)|count\(DISTINCT/.test(s)) return 'key check';
  if (/FILTER \(WHERE \(?regexp_full_match/.test(s)) return 'type detection';
  if (/SELECT \* REPLACE|SET DATA TYPE/.test(s)) return 'cast to types';
  if (/^CREATE OR REPLACE TABLE "\w*clean_\w+" AS SELECT \* FROM "\w*raw_/.test(s)) return 'copy raw to clean';
  if (/^CREATE TEMP TABLE "__diff_/.test(s)) return 'diff: join into work table';
  if (/__diff_/.test(s)) return 'diff: summary, keys, cells';
  if (/duckdb_columns\(\)|pragma_table_info\(/.test(s)) return 'catalogue lookup';
  return 'other';
}

async function timed<T>(name: string, work: () => Promise<T>): Promise<T> {
  phase = name;
  const started = performance.now();
  try {
    return await work();
  } finally {
    process.stderr.write(`  ${name.padEnd(28)} ${((performance.now() - started) / 1000).toFixed(2)} s\n`);
  }
}

async function main(): Promise<void> {
  const argv = process.argv.slice(2);
  const option = (name: string, fallback: number) => {
    const i = argv.indexOf(name);
    return i >= 0 ? Number(argv[i + 1]) : fallback;
  };
  const rows = option('--rows', 1_000_000);
  const seed = option('--seed', 20260201);
  const top = option('--top', 8);
  const limitIndex = argv.indexOf('--memory-limit');
  const memoryLimit = limitIndex >= 0 ? argv[limitIndex + 1] : undefined;
  const pair = ensurePair(OUT_DIR, rows, seed);
  instrument();
  let started = performance.now();
  if (argv.includes('--revision')) {
    instrumentGit();
    const root = path.join(OUT_DIR, `diff-revisions-${rows}-s${seed}`);
    if (!existsSync(root)) throw new Error(`no repository at ${root}: run bench/diff.ts --rows ${rows} first`);
    rmSync(path.join(root, '.errata'), { recursive: true, force: true });
    const base = await RevisionTree.at(root, 'HEAD~1', path.join(root, '.errata', 'cache', 'blobs'));
    const head = await RevisionTree.at(root, 'HEAD', path.join(root, '.errata', 'cache', 'blobs'));
    for (const run of ['cold', 'cached']) {
      if (run === 'cached') {
        report(rows, performance.now() - started, top);
        timings.length = 0;
        started = performance.now();
      }
      const result = await timed(`${run}: whole revision diff`, () =>
        diffRevisions({
          base,
          head,
          workDir: path.join(root, '.errata', 'tmp'),
          cache: { dir: path.join(root, '.errata', 'cache', 'tables'), write: true },
          cellLimit: 0,
          onProgress: (e) => {
            phase = `${run}: ${e.phase}`;
          },
        }),
      );
      process.stderr.write(`  summary: ${JSON.stringify(result.diffs[0].summary)}\n`);
    }
    report(rows, performance.now() - started, top);
    return;
  }
  // The file diff exactly as `errata diff --files OLD NEW --key id --summary` runs it.
  const diff = await timed('file diff', () => diffFiles(pair.oldFile, pair.newFile, { key: [KEY], cellLimit: 0, memoryLimit }));
  process.stderr.write(`  summary: ${JSON.stringify((diff as { summary: unknown }).summary)}\n`);
  report(rows, performance.now() - started, top);
}

function report(rows: number, total: number, top: number): void {
  const byPhase = new Map<string, number>();
  for (const t of timings) byPhase.set(t.phase, (byPhase.get(t.phase) ?? 0) + t.ms);
  const measured = timings.reduce((sum, t) => sum + t.ms, 0);
  console.log(`rows ${rows.toLocaleString('en-US')}, total ${(total / 1000).toFixed(2)} s (statements and git reads ${(measured / 1000).toFixed(2)} s)`);
  for (const [name, ms] of byPhase) console.log(`${name.padEnd(30)} ${(ms / 1000).toFixed(2).padStart(8)} s  ${((100 * ms) / total).toFixed(0).padStart(3)}%`);
  const byKind = new Map<string, { ms: number; n: number }>();
  for (const t of timings) {
    const side = /old_side|"b_|-old\.csv/.test(t.sql) ? ' (old)' : /new_side|"h_|-new\.csv/.test(t.sql) ? ' (new)' : '';
    const name = kindOf(t.sql).startsWith('diff') ? kindOf(t.sql) : `${kindOf(t.sql)}${side}`;
    const k = byKind.get(name) ?? { ms: 0, n: 0 };
    k.ms += t.ms;
    k.n += 1;
    byKind.set(name, k);
  }
  console.log('by kind of work:');
  for (const [name, { ms, n }] of [...byKind].sort((a, b) => b[1].ms - a[1].ms)) {
    console.log(`  ${name.padEnd(28)} ${(ms / 1000).toFixed(2).padStart(8)} s  ${((100 * ms) / total).toFixed(0).padStart(3)}%  (${n}x)`);
  }
  const diffStatements = timings.filter((t) => /__diff_/.test(t.sql));
  if (diffStatements.length) {
    console.log('statements of the diff itself:');
    for (const t of diffStatements) console.log(`${(t.ms / 1000).toFixed(2).padStart(8)} s  ${t.sql.replace(/\s+/g, ' ').slice(0, 150)}`);
  }
  console.log('slowest statements:');
  for (const t of [...timings].sort((a, b) => b.ms - a.ms).slice(0, top)) {
    console.log(`${(t.ms / 1000).toFixed(2).padStart(8)} s  [${t.phase}] ${t.sql.replace(/\s+/g, ' ').slice(0, 160)}`);
  }
}

main().catch((error) => {
  console.error(error instanceof Error ? error.message : error);
  process.exitCode = 1;
});
