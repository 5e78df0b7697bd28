/**
 * Build benchmark: `errata build` on a one-million-row table with 30 corrections, against a plain
 * DuckDB read-CSV/write-CSV of the same file (and, for context, the same read into a table first).
 *
 *   npx tsc -p . && npx tsx bench/build.ts [--rows N] [--seed S] [--runs R]
 *
 * The project is generated once under bench/out/ and reused. The build runs as the real command line
 * in a child process (so its time includes start-up); its peak memory is the child's maximum resident
 * set size. With --runs R each side runs R times and the median is reported.
 */
import { createReadStream, existsSync, mkdirSync, readFileSync, rmSync, statSync } from 'node:fs';
import { availableParallelism, loadavg } from 'node:os';
import path from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { COLUMNS, OUT_DIR, REPO_ROOT, TABLE, ensureProject } from './project.js';
import { log, median, parseWholeOptions, runMeasured, type Run } from './measure.js';

const TARGET_RATIO = 3;
const CLI = path.join(REPO_ROOT, 'bin', 'errata.js');


const seconds = (ms: number) => ms / 1000;

/** Read the file once so both sides start from a warm page cache. */
async function warm(file: string): Promise<void> {
  for await (const _ of createReadStream(file, { highWaterMark: 1 << 22 })) {
    /* discard */
  }
}

/** Run `errata build` in `root` as a child process, timed, with its peak memory. */
async function runBuild(root: string): Promise<Run> {
  const run = await runMeasured(process.execPath, [CLI, 'build', '--quiet'], { cwd: root, reportDir: OUT_DIR });
  if (run.code !== 0) throw new Error(`errata build exited with ${run.code}\n${run.stdout}${run.stderr}`);
  return run;
}

/**
 * Plain DuckDB in a fresh in-memory instance: `streamed`, one COPY (SELECT * FROM read_csv(...)) TO ...,
 * the baseline of the target; `through a table`, the file read into a table and the table written, as
 * a build must hold its table to correct it (for context only: it shows what keeping the table costs).
 */
async function runBaseline(rawFile: string, outFile: string, how: 'streamed' | 'through a table'): Promise<number> {
  rmSync(outFile, { force: true });
  const started = performance.now();
  const instance = await DuckDBInstance.create(':memory:');
  const connection = await instance.connect();
  const quote = (s: string) => `'${s.replaceAll("'", "''")}'`;
  if (how === 'streamed') {
    await connection.run(`COPY (SELECT * FROM read_csv(${quote(rawFile)})) TO ${quote(outFile)} (FORMAT csv, HEADER true)`);
  } else {
    await connection.run(`CREATE TABLE delivery AS SELECT * FROM read_csv(${quote(rawFile)})`);
    await connection.run(`COPY delivery TO ${quote(outFile)} (FORMAT csv, HEADER true)`);
  }
  connection.closeSync();
  instance.closeSync();
  const ms = performance.now() - started;
  if (!existsSync(outFile) || statSync(outFile).size === 0) throw new Error('the baseline wrote nothing');
  return ms;
}

interface ManifestFigures {
  rows: number;
  columns: number;
  lineage: number;
  corrections: number;
}

function readManifest(root: string): ManifestFigures {
  const manifest = JSON.parse(readFileSync(path.join(root, 'clean', 'manifest.json'), 'utf8'));
  const table = manifest.tables[TABLE];
  return {
    rows: table.outputs.data.rows,
    columns: table.outputs.data.columns,
    lineage: table.outputs.lineage.records,
    corrections: table.sources.filter((s: { path: string }) => s.path.startsWith(`corrections/${TABLE}/`)).length,
  };
}

async function main(): Promise<void> {
  const args = parseWholeOptions(process.argv.slice(2), { rows: 1_000_000, seed: 20260115, runs: 1 });
  if (!existsSync(path.join(REPO_ROOT, 'dist', 'cli', 'main.js'))) {
    throw new Error('dist/ is missing: compile first with `npx tsc -p .`');
  }
  mkdirSync(OUT_DIR, { recursive: true });
  const project = await ensureProject({ rows: args.rows, seed: args.seed, log });
  log(`${project.reused ? 'reusing' : 'generated'} ${path.relative(REPO_ROOT, project.root)} (raw CSV ${(project.rawBytes / 2 ** 20).toFixed(1)} MiB)`);
  await warm(project.rawFile);
  const loadBefore = loadavg()[0];

  const baselineOut = path.join(OUT_DIR, `baseline-${process.pid}.csv`);
  const baselineMs: number[] = [];
  const throughTableMs: number[] = [];
  const builds: Run[] = [];
  try {
    for (let run = 1; run <= args.runs; run += 1) {
      log(`run ${run}/${args.runs}: baseline…`);
      baselineMs.push(await runBaseline(project.rawFile, baselineOut, 'streamed'));
      throughTableMs.push(await runBaseline(project.rawFile, baselineOut, 'through a table'));
      log(`  baseline ${seconds(baselineMs[baselineMs.length - 1]).toFixed(2)} s (through a table ${seconds(throughTableMs[throughTableMs.length - 1]).toFixed(2)} s); errata build…`);
      builds.push(await runBuild(project.root));
      log(`  build ${seconds(builds[builds.length - 1].ms).toFixed(2)} s`);
    }
  } finally {
    rmSync(baselineOut, { force: true });
  }
  const last = builds[builds.length - 1];
  if (last.stderr.trim()) log(`build messages:\n${last.stderr.trim()}`);

  const figures = readManifest(project.root);
  const buildS = seconds(median(builds.map((b) => b.ms)));
  const baselineS = seconds(median(baselineMs));
  const throughTableS = seconds(median(throughTableMs));
  const ratio = buildS / baselineS;
  const peaks = builds.map((b) => b.peakRss).filter((p): p is number => p !== null);
  const peak = peaks.length ? Math.max(...peaks) : null;
  const line = (label: string, value: string) => console.log(`${label.padEnd(26)} ${value}`);

  line('rows', figures.rows.toLocaleString('en-US'));
  line('columns (raw)', String(COLUMNS.length));
  line('columns (clean)', String(figures.columns));
  line('corrections', String(figures.corrections));
  line('lineage records', figures.lineage.toLocaleString('en-US'));
  line('build seconds', `${buildS.toFixed(2)}${args.runs > 1 ? ` (median of ${args.runs})` : ''}`);
  line('rows per second', Math.round(figures.rows / buildS).toLocaleString('en-US'));
  line('baseline seconds', `${baselineS.toFixed(2)}${args.runs > 1 ? ` (median of ${args.runs})` : ''}`);
  line('ratio build/baseline', ratio.toFixed(2));
  line('read, keep, write seconds', `${throughTableS.toFixed(2)} (the file read into a table, then written; build ${(buildS / throughTableS).toFixed(2)}x that, for context)`);
  line('build peak memory', peak === null ? 'not measured' : `${(peak / 2 ** 20).toFixed(0)} MiB (max RSS, ${last.rssSource})`);
  line('machine', `${availableParallelism()} CPUs, 1-minute load average ${loadBefore.toFixed(2)} before, ${loadavg()[0].toFixed(2)} after (other work on the machine slows both sides)`);
  console.log(
    ratio <= TARGET_RATIO
      ? `TARGET MET: build is ${ratio.toFixed(2)}x the baseline (target at most ${TARGET_RATIO}x)`
      : `TARGET MISSED: build is ${ratio.toFixed(2)}x the baseline (target at most ${TARGET_RATIO}x)`,
  );
}

main().catch((error) => {
  console.error(error instanceof Error ? error.message : error);
  process.exitCode = 1;
});
