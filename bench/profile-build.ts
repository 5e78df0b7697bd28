/**
 * Where a build's time goes: runs the same build as `errata build` in this process, timing every SQL
 * statement the engine session runs, and prints the time by phase and the slowest statements.
 *
 *   npx tsx bench/profile-build.ts [--rows N] [--seed S] [--top K]
 *
 * Uses (or generates) the same project as bench/build.ts. Outputs are staged and then discarded, so
 * the project's clean/ folder is left as it was.
 */
import path from 'node:path';
import { buildProject } from '../src/build/build-project.js';
import { discardStaged, stageOutputs } from '../src/build/write-outputs.js';
import { Session } from '../src/engine/session.js';
import { WorkingTree } from '../src/git/tree.js';
import { ensureProject } from './project.js';

interface Timing {
  phase: string;
  kind: string;
  sql: string;
  ms: number;
  /** When the statement started, ms since the build began. */
  at: number;
  /** CPU time of the whole process (every engine thread) while it ran. */
  cpuMs: number;
}

const timings: Timing[] = [];
let buildStarted = 0;
let phase = 'open';

/** A short name for what a statement does, from its text. */
function kindOf(sql: string): string {
  const s = sql.replace(/\s+/g, ' ').trim();
  if (/read_csv\(/.test(s)) return 'read raw CSV';
  if (/row_number\(\) OVER \(\)/.test(s)) return 'key check';
  if (/json_serialize_sql/.test(s)) return 'expression guard';
  if (/duckdb_columns\(\)|pragma_table_info\(/.test(s)) return 'catalogue lookup';
  if (/count\(\*\) FILTER/.test(s)) return 'type detection scan';
  if (/^COPY .* FORMAT csv/.test(s)) return 'write clean CSV';
  if (/^COPY .* FORMAT parquet/.test(s)) return 'write lineage Parquet';
  if (/^INSERT INTO "lineage_/.test(s)) return /VALUES \(NULL/.test(s) ? 'lineage column event' : 'lineage capture';
  if (/^UPDATE /.test(s)) return 'update';
  if (/^CREATE OR REPLACE TABLE "clean_\w+" AS SELECT \* REPLACE/.test(s)) return 'table rewrite (cast)';
  if (/^CREATE OR REPLACE TABLE "clean_\w+" AS SELECT \*,/.test(s)) return 'table rewrite (new column)';
  if (/^CREATE OR REPLACE TABLE "clean_\w+" AS SELECT \* FROM "raw_/.test(s)) return 'copy raw to clean';
  if (/^ALTER TABLE/.test(s)) return 'alter table';
  if (/^SET /.test(s)) return 'settings';
  if (/count\(\*\)/.test(s)) return 'count';
  return 'other';
}

function instrument(): void {
  const proto = Session.prototype as unknown as Record<string, (...args: unknown[]) => Promise<unknown>>;
  // `one` goes through `all`, so wrapping these four counts every statement exactly once.
  for (const method of ['run', 'runRaw', 'all', 'allRaw']) {
    const original = proto[method];
    proto[method] = async function (this: unknown, sql: unknown, ...rest: unknown[]) {
      const kind = kindOf(String(sql));
      // Type detection never runs inside a correction: once it does, the corrections are done.
      if (kind === 'type detection scan' && phase.startsWith('correction')) phase = 'final typing';
      const started = performance.now();
      const cpu = process.cpuUsage();
      try {
        return await original.call(this, sql, ...rest);
      } finally {
        timings.push({ phase, kind, sql: String(sql).replace(/\s+/g, ' ').trim(), ms: performance.now() - started, at: started - buildStarted, cpuMs: cpuMsSince(cpu) });
        // Lock-down is the last thing before the clean table is made and typed.
        if (/SET lock_configuration/.test(String(sql))) phase = 'initial typing';
      }
    };
  }
}

function args(argv: string[]) {
  const out = { rows: 1_000_000, seed: 20260115, top: 15 };
  for (let i = 0; i < argv.length; i += 1) {
    const [flag, inline] = argv[i].split('=', 2);
    const value = Number(inline ?? argv[++i]);
    if (flag === '--rows') out.rows = value;
    else if (flag === '--seed') out.seed = value;
    else if (flag === '--top') out.top = value;
    else throw new Error(`unknown option ${argv[i]} (known: --rows N, --seed S, --top K)`);
  }
  return out;
}

function cpuMsSince(start: NodeJS.CpuUsage): number {
  const used = process.cpuUsage(start);
  return (used.user + used.system) / 1000;
}

const fmt = (ms: number) => `${(ms / 1000).toFixed(2).padStart(7)} s`;

function table(title: string, groups: Map<string, { ms: number; n: number; cpuMs: number }>, total: number): void {
  // Cores busy: CPU time over wall time; 2.0 on two cores means the engine used both throughout.
  console.log(`\n${title} (cores busy in brackets)`);
  for (const [name, g] of [...groups].sort((a, b) => b[1].ms - a[1].ms)) {
    console.log(`  ${fmt(g.ms)} ${((100 * g.ms) / total).toFixed(1).padStart(5)} %  ${String(g.n).padStart(4)}x  (${(g.cpuMs / g.ms).toFixed(1)})  ${name}`);
  }
}

function groupBy(items: Timing[], key: (t: Timing) => string): Map<string, { ms: number; n: number; cpuMs: number }> {
  const groups = new Map<string, { ms: number; n: number; cpuMs: number }>();
  for (const t of items) {
    const g = groups.get(key(t)) ?? { ms: 0, n: 0, cpuMs: 0 };
    g.ms += t.ms;
    g.cpuMs += t.cpuMs;
    g.n += 1;
    groups.set(key(t), g);
  }
  return groups;
}

async function main(): Promise<void> {
  const options = args(process.argv.slice(2));
  const project = await ensureProject({ rows: options.rows, seed: options.seed, log: (l) => process.stderr.write(`${l}\n`) });
  instrument();
  const root = project.root;
  const workDir = path.join(root, '.errata', 'tmp');
  const tree = new WorkingTree(root);
  const marks: Array<[string, number]> = [];
  const mark = (name: string) => marks.push([name, performance.now()]);

  const started = performance.now();
  buildStarted = started;
  mark('start');
  let sawCorrection = false;
  const build = await buildProject({
    tree,
    workDir,
    // As `errata build` runs it: the raw table becomes the clean one.
    keepRaw: false,
    onProgress: (event) => {
      if (event.phase === 'load') phase = 'load + key check';
      if (event.phase === 'correct') {
        if (!sawCorrection) mark('corrections');
        sawCorrection = true;
        phase = `correction ${event.correction}`;
      }
    },
  });
  mark('built');
  phase = 'write outputs';
  const staged = await stageOutputs(build, workDir, root);
  mark('staged');
  discardStaged(staged);
  build.session.close();
  const total = performance.now() - started;

  const sqlMs = timings.reduce((s, t) => s + t.ms, 0);
  console.log(`rows ${build.tables[0]?.rows.toLocaleString('en-US')}, total in-process build + staging ${fmt(total)}, of which SQL ${fmt(sqlMs)}`);
  for (let i = 1; i < marks.length; i += 1) console.log(`  ${marks[i - 1][0]} → ${marks[i][0]}: ${fmt(marks[i][1] - marks[i - 1][1])}`);
  table('By phase (SQL time)', groupBy(timings, (t) => (t.phase.startsWith('correction') ? 'corrections (all 30)' : t.phase)), total);
  table('By kind of statement', groupBy(timings, (t) => t.kind), total);
  table('By correction', groupBy(timings.filter((t) => t.phase.startsWith('correction')), (t) => t.phase.slice('correction '.length)), total);
  console.log(`\nSlowest ${options.top} statements`);
  for (const t of [...timings].sort((a, b) => b.ms - a.ms).slice(0, options.top)) {
    console.log(`  ${fmt(t.ms)} (${(t.cpuMs / t.ms).toFixed(1)})  [${t.phase}] ${t.kind}: ${t.sql.slice(0, 150)}${t.sql.length > 150 ? '…' : ''}`);
  }
  console.log(`\nNot SQL (git blob ids, output hashes, YAML, JS): ${fmt(total - sqlMs)}, in gaps of 20 ms or more:`);
  // Statements run one after another, so the time between one's end and the next one's start is JavaScript.
  const ends = [0, ...timings.map((t) => t.at + t.ms)];
  const starts = [...timings.map((t) => t.at), total];
  for (let i = 0; i < starts.length; i += 1) {
    const gap = starts[i] - ends[i];
    if (gap < 20) continue;
    const before = i > 0 ? timings[i - 1].kind : 'start';
    const after = i < timings.length ? timings[i].kind : 'end';
    console.log(`  ${fmt(gap)}  after ${before}, before ${after}${i < timings.length ? ` [${timings[i].phase}]` : ''}`);
  }
}

main().catch((error) => {
  console.error(error instanceof Error ? (error.stack ?? error.message) : error);
  process.exitCode = 1;
});
