/**
 * Discovery benchmark: `errata profile --files` and `errata check --files` on a one-million-row,
 * 20-column delivery (the build benchmark's invented project), each against a plain DuckDB read of
 * the same file: `CREATE TABLE t AS SELECT * FROM read_csv(file)` in a fresh in-memory instance, with
 * DuckDB's own defaults (its type detection included). That is the reference the target is set
 * against: profile and check both need the file read into the engine, as this does. For comparison
 * the figures against a read that keeps nothing (the row count and a hash of every column, the diff
 * benchmark's reference) are printed too.
 *
 *   npx tsc -p . && npx tsx bench/profile.ts [--rows N] [--seed S] [--runs R]
 *
 * Both commands run as the real command line in child processes, so their times include start-up;
 * peak memory is the child's maximum resident set size. With --runs R each runs R times; medians.
 */
import { createReadStream, existsSync, mkdirSync } from 'node:fs';
import { availableParallelism, loadavg } from 'node:os';
import path from 'node:path';
import { performance } from 'node:perf_hooks';
import { DuckDBInstance } from '@duckdb/node-api';
import { log, median, parseWholeOptions, runMeasured, type Run } from './measure.js';
import { COLUMNS, OUT_DIR, REPO_ROOT, TABLE, ensureProject } from './project.js';

const TARGET_RATIO = 3;
const CLI = path.join(REPO_ROOT, 'bin', 'errata.js');


const quote = (s: string) => `'${s.replaceAll("'", "''")}'`;

/**
 * DuckDB alone reading the file: with `materialise` (the reference), into a table (CREATE TABLE … AS
 * SELECT * FROM read_csv); without, every column of every row read once and kept nothing of (count
 * plus a hash of every column, as the diff benchmark defines it), shown for comparison.
 */
async function baseline(file: string, materialise = false): Promise<number> {
  const started = performance.now();
  const instance = await DuckDBInstance.create(':memory:');
  const connection = await instance.connect();
  try {
    const hashes = COLUMNS.map((c, i) => `bit_xor(hash("${c}")) AS h${i}`).join(', ');
    if (materialise) await connection.run(`CREATE TABLE t AS SELECT * FROM read_csv(${quote(file)})`);
    else await connection.runAndReadAll(`SELECT count(*) AS n, ${hashes} FROM read_csv(${quote(file)})`);
  } finally {
    connection.closeSync();
    instance.closeSync();
  }
  return performance.now() - started;
}

async function runCli(args: string[], cwd: string): Promise<Run> {
  const run = await runMeasured(process.execPath, [CLI, ...args], { cwd, reportDir: OUT_DIR });
  // check exits 1 when it finds errors, which the planted problems are.
  if (run.code !== 0 && run.code !== 1) throw new Error(`errata ${args.join(' ')} exited with ${run.code}\n${run.stderr}`);
  return run;
}

async function main(): Promise<void> {
  const args = parseWholeOptions(process.argv.slice(2), { rows: 1_000_000, seed: 20260115, runs: 1 });
  if (!existsSync(path.join(REPO_ROOT, 'dist', 'cli', 'main.js'))) throw new Error('dist/ is missing: compile first with `npx tsc -p .`');
  mkdirSync(OUT_DIR, { recursive: true });
  const project = await ensureProject({ rows: args.rows, seed: args.seed, log });
  const file = project.rawFile;
  const codebook = path.join(project.root, 'codebook', `${TABLE}.yaml`);
  for await (const _ of createReadStream(file, { highWaterMark: 1 << 22 })) {
    /* warm the page cache so every side reads from memory */
  }
  const loadBefore = loadavg()[0];
  const hashReads: number[] = [];
  const tableReads: number[] = []; // the reference
  const profiles: Run[] = [];
  const checks: Run[] = [];
  for (let run = 1; run <= args.runs; run += 1) {
    log(`run ${run}/${args.runs}: DuckDB alone…`);
    hashReads.push(await baseline(file));
    tableReads.push(await baseline(file, true));
    log('  errata profile --files…');
    profiles.push(await runCli(['profile', '--files', file, '--key', 'participant_id'], project.root));
    log('  errata check --files…');
    checks.push(await runCli(['check', '--files', file, '--codebook', codebook], project.root));
  }
  // The first line of each text report says what was found: rows and variables, errors and warnings.
  const summary = (runs: Run[]) => runs[runs.length - 1].stdout.split('\n')[0].trim();
  const hashS = median(hashReads) / 1000;
  const profileS = median(profiles.map((r) => r.ms)) / 1000;
  const checkS = median(checks.map((r) => r.ms)) / 1000;
  const cpu = (runs: Run[]) => {
    const values = runs.map((r) => r.cpuS).filter((c): c is number => c !== null);
    return values.length ? `${median(values).toFixed(2)} CPU s` : 'CPU not measured';
  };
  const peak = (runs: Run[]) => {
    const peaks = runs.map((r) => r.peakRss).filter((p): p is number => p !== null);
    return peaks.length ? `${(Math.max(...peaks) / 2 ** 20).toFixed(0)} MiB` : 'not measured';
  };
  const of = args.runs > 1 ? ` (median of ${args.runs})` : '';
  const line = (label: string, value: string) => console.log(`${label.padEnd(30)} ${value}`);
  line('rows × columns', `${args.rows.toLocaleString('en-US')} × ${COLUMNS.length} (${(project.rawBytes / 2 ** 20).toFixed(0)} MiB CSV)`);
  const baseS = median(tableReads) / 1000;
  line('DuckDB read seconds', `${baseS.toFixed(2)}${of} (CREATE TABLE AS SELECT * FROM read_csv: the reference)`);
  line('DuckDB count+hash seconds', `${hashS.toFixed(2)}${of} (reads every value, keeps nothing: for comparison, profile ${(profileS / hashS).toFixed(2)}x, check ${(checkS / hashS).toFixed(2)}x)`);
  line('profile seconds', `${profileS.toFixed(2)}${of} (${cpu(profiles)}), peak ${peak(profiles)}: ${summary(profiles)}`);
  line('profile rows per second', Math.round(args.rows / profileS).toLocaleString('en-US'));
  line('ratio profile / DuckDB read', (profileS / baseS).toFixed(2));
  line('check seconds', `${checkS.toFixed(2)}${of} (${cpu(checks)}), peak ${peak(checks)}: ${summary(checks)}`);
  line('check rows per second', Math.round(args.rows / checkS).toLocaleString('en-US'));
  line('ratio check / DuckDB read', (checkS / baseS).toFixed(2));
  line('machine', `${availableParallelism()} CPUs, 1-minute load average ${loadBefore.toFixed(2)} before, ${loadavg()[0].toFixed(2)} after (other work slows both sides)`);
  for (const [name, seconds] of [['profile', profileS], ['check', checkS]] as const) {
    const ratio = seconds / baseS;
    console.log(`${ratio <= TARGET_RATIO ? 'TARGET MET' : 'TARGET MISSED'}: ${name} is ${ratio.toFixed(2)}x a plain DuckDB read of the file (target at most ${TARGET_RATIO}x)`);
  }
}

main().catch((error: unknown) => {
  console.error(error instanceof Error ? error.message : error);
  process.exitCode = 1;
});
