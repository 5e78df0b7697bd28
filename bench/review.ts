/**
 * Review benchmark: `errata review BASE..HEAD` on a one-million-row table whose range adds 100
 * approved corrections changing about 200,000 cells, against `errata diff BASE..HEAD --summary` of
 * the same range (the review builds both ends and diffs them too, then traces every changed cell to a
 * correction and checks the approvals; target: the review takes at most 1.5x the diff).
 *
 *   npx tsc -p . && npx tsx bench/review.ts [--rows N] [--seed S]
 *
 * The project is generated once under bench/out/ (see review-project.ts) and reused. Both commands run
 * as the real command line in child processes, so their times include start-up, and each runs twice,
 * alternating (review, diff, review, diff): the first run of each starts from an empty .errata/ (it
 * parses the delivery and fills the cache), the second reads the parsed delivery from the cache.
 * Peak memory is the child's maximum resident set size, CPU time its user plus system seconds. The
 * review must pass, and the cells it attributes to corrections must equal what the generator planted.
 *
 * bench/review-profile.ts times the phases of both commands in one process.
 */
import { existsSync, mkdirSync, readFileSync, rmSync } from 'node:fs';
import { availableParallelism, loadavg, totalmem } from 'node:os';
import path from 'node:path';
import { OUT_DIR, REPO_ROOT, ensureReviewProject } from './review-project.js';
import { log, parseWholeOptions, runMeasured } from './measure.js';

const TARGET_RATIO = 1.5;
const CLI = path.join(REPO_ROOT, 'bin', 'errata.js');


const seconds = (ms: number) => ms / 1000;
const mib = (bytes: number | null) => (bytes === null ? 'not measured' : `${(bytes / 2 ** 20).toFixed(0)} MiB`);

interface CliRun {
  ms: number;
  code: number;
  /** Peak resident set size of the command, in bytes (null when it could not be measured). */
  peakRss: number | null;
  /** User plus system CPU seconds of the command (null without /usr/bin/time). */
  cpuSeconds: number | null;
  stdout: string;
  stderr: string;
}

let rssSource = '';

/** Run `errata ARGS` in `root` as a child process, timed, with its peak memory and CPU time. */
async function runCli(root: string, cliArgs: string[]): Promise<CliRun> {
  const run = await runMeasured(process.execPath, [CLI, ...cliArgs], { cwd: root, reportDir: OUT_DIR });
  rssSource = run.rssSource;
  return { ms: run.ms, code: run.code ?? -1, peakRss: run.peakRss, cpuSeconds: run.cpuS, stdout: run.stdout, stderr: run.stderr };
}

interface ReviewJson {
  passed: boolean;
  commits: number;
  cellsChanged: number;
  cellsByCorrection: number;
  cellsByDelivery: number;
  correctionsReviewed: string[];
  findings: Array<{ rule: string; severity: string; message: string; file?: string }>;
}

interface DiffSummaryJson {
  rows: { added: number; removed: number; changed: number; unchanged: number };
  cells: { changed: number };
  columns: { added: string[]; removed: string[]; retyped: string[] };
}

function parseJson<T>(run: CliRun, what: string): T {
  try {
    return JSON.parse(run.stdout) as T;
  } catch {
    throw new Error(`${what} printed no JSON (exit ${run.code})\n${run.stdout.slice(0, 2000)}${run.stderr.slice(0, 2000)}`);
  }
}

async function main(): Promise<void> {
  const args = parseWholeOptions(process.argv.slice(2), { rows: 1_000_000, seed: 20260202 });
  if (!existsSync(path.join(REPO_ROOT, 'dist', 'cli', 'main.js'))) {
    throw new Error('dist/ is missing: compile first with `npx tsc -p .`');
  }
  mkdirSync(OUT_DIR, { recursive: true });
  const project = await ensureReviewProject({ rows: args.rows, seed: args.seed, log });
  const { planned } = project;
  log(
    `${project.reused ? 'reusing' : 'generated'} ${path.relative(REPO_ROOT, project.root)} (raw CSV ${(project.rawBytes / 2 ** 20).toFixed(1)} MiB, ` +
      `${planned.corrections} corrections in ${planned.commits} commits, ${planned.cells.toLocaleString('en-US')} cells planted)`,
  );
  const range = `${project.base}..${project.head}`;
  const cache = path.join(project.root, '.errata');
  const loadBefore = loadavg()[0];

  const timed = async (label: string, cliArgs: string[]) => {
    log(`${label}…`);
    const run = await runCli(project.root, cliArgs);
    log(`  ${seconds(run.ms).toFixed(2)} s, exit ${run.code}, peak ${mib(run.peakRss)}${run.cpuSeconds === null ? '' : `, ${run.cpuSeconds.toFixed(1)} CPU s`}`);
    return run;
  };
  // Each command's first run starts from an empty cache, so it parses the delivery and fills it; its
  // second run reads the parsed delivery back (both commands cache the same entries). The runs
  // alternate, so a change in other load on the machine falls on both sides alike.
  const review = ['review', range, '--format', 'json'];
  const diff = ['diff', range, '--format', 'json', '--summary'];
  rmSync(cache, { recursive: true, force: true });
  const review1 = await timed('review, run 1 (empty cache)', review);
  rmSync(cache, { recursive: true, force: true });
  const diff1 = await timed('diff, run 1 (empty cache)', diff);
  // Run 2 compares the commands with parsed deliveries cached; their finished answers (diff and review
  // results, kept by their inputs) are removed, or each would only read its own answer back.
  const answers = ['diffs', 'reviews'].map((name) => path.join(cache, 'cache', name));
  answers.forEach((dir) => rmSync(dir, { recursive: true, force: true }));
  const review2 = await timed('review, run 2 (cache filled)', review);
  answers.forEach((dir) => rmSync(dir, { recursive: true, force: true }));
  const diff2 = await timed('diff, run 2 (cache filled)', diff);
  const reviews = [review1, review2];
  const diffs = [diff1, diff2];
  const loadAfter = loadavg()[0];

  // Correctness first: a fast wrong answer is no answer.
  const problems: string[] = [];
  reviews.forEach((run, i) => {
    const result = parseJson<ReviewJson>(run, `review run ${i + 1}`);
    const errors = result.findings.filter((f) => f.severity === 'error');
    const warnings = result.findings.filter((f) => f.severity === 'warning');
    const at = `review run ${i + 1}`;
    if (run.code !== 0) problems.push(`${at} exited with ${run.code}`);
    if (!result.passed) problems.push(`${at} did not pass: ${errors.length} errors, e.g. ${errors.slice(0, 3).map((f) => `${f.rule}: ${f.message}`).join(' | ')}`);
    // At small sizes a narrowed set-where correction can find no row; the planner knows which.
    const unexpected = warnings.filter((f) => !(f.rule === 'correction-changes-nothing' && f.file !== undefined && planned.byCorrection[f.file] === 0));
    if (unexpected.length) problems.push(`${at} warned ${unexpected.length} times, e.g. ${unexpected.slice(0, 3).map((f) => `${f.rule}: ${f.message}`).join(' | ')}`);
    if (result.cellsByCorrection !== planned.cells) problems.push(`${at}: cellsByCorrection ${result.cellsByCorrection} but ${planned.cells} were planted`);
    if (result.cellsChanged !== planned.cells) problems.push(`${at}: cellsChanged ${result.cellsChanged} but ${planned.cells} were planted`);
    if (result.cellsByDelivery !== 0) problems.push(`${at}: cellsByDelivery ${result.cellsByDelivery}, expected 0 (no new delivery)`);
    if (result.correctionsReviewed.length !== planned.corrections) problems.push(`${at}: ${result.correctionsReviewed.length} corrections reviewed, expected ${planned.corrections}`);
    if (result.commits !== planned.commits) problems.push(`${at}: ${result.commits} commits in the range, expected ${planned.commits}`);
    if (run.stderr.trim()) log(`${at} messages:\n${run.stderr.trim()}`);
  });
  diffs.forEach((run, i) => {
    const summary = parseJson<DiffSummaryJson>(run, `diff run ${i + 1}`);
    const at = `diff run ${i + 1}`;
    if (run.code !== 0) problems.push(`${at} exited with ${run.code}`);
    if (summary.cells.changed !== planned.cells) problems.push(`${at}: ${summary.cells.changed} cells changed but ${planned.cells} were planted`);
    if (summary.rows.added || summary.rows.removed) problems.push(`${at}: rows added ${summary.rows.added}, removed ${summary.rows.removed}; expected none`);
    const columns = [...summary.columns.added, ...summary.columns.removed, ...summary.columns.retyped];
    if (columns.length) problems.push(`${at}: schema changes ${columns.join(', ')}; expected none`);
    if (run.stderr.trim()) log(`${at} messages:\n${run.stderr.trim()}`);
  });

  const reviewS = reviews.map((r) => seconds(r.ms));
  const diffS = diffs.map((r) => seconds(r.ms));
  const ratios = reviewS.map((s, i) => s / diffS[i]);
  const line = (label: string, value: string) => console.log(`${label.padEnd(28)} ${value}`);
  const both = (values: number[], digits = 2) => `${values[0].toFixed(digits)} (run 1, empty cache)   ${values[1].toFixed(digits)} (run 2, cache filled)`;
  line('rows', project.rows.toLocaleString('en-US'));
  line('corrections', `${planned.corrections} (in ${planned.commits} commits, each after its approval note)`);
  line('changed cells (planted)', planned.cells.toLocaleString('en-US'));
  line('review seconds', both(reviewS));
  line('diff seconds', both(diffS));
  line('ratio review/diff', both(ratios));
  const cpu = (runs: CliRun[]) => runs.map((r) => r.cpuSeconds);
  const [reviewCpu, diffCpu] = [cpu(reviews), cpu(diffs)];
  if ([...reviewCpu, ...diffCpu].every((c) => c !== null)) {
    const c = (values: Array<number | null>) => values as number[];
    line('review CPU seconds', both(c(reviewCpu), 1));
    line('diff CPU seconds', both(c(diffCpu), 1));
    line('ratio of CPU seconds', `${both(c(reviewCpu).map((v, i) => v / c(diffCpu)[i]))}   (user + system; less sensitive to other load)`);
  }
  line('review peak memory', `${mib(reviews[0].peakRss)} (run 1)   ${mib(reviews[1].peakRss)} (run 2)   (max RSS, ${rssSource})`);
  line('diff peak memory', `${mib(diffs[0].peakRss)} (run 1)   ${mib(diffs[1].peakRss)} (run 2)   (max RSS, ${rssSource})`);
  line('checks', problems.length ? `FAILED:\n  ${problems.join('\n  ')}` : 'review passed; cellsChanged = cellsByCorrection = diff cells = planted');
  line('machine', `${availableParallelism()} CPUs, ${(totalmem() / 2 ** 30).toFixed(0)} GiB, 1-minute load average ${loadBefore.toFixed(2)} before, ${loadAfter.toFixed(2)} after (other work on the machine slows both sides)`);
  const worst = Math.max(...ratios);
  const verdict = worst <= TARGET_RATIO ? 'TARGET MET' : 'TARGET MISSED';
  console.log(
    `${verdict}: review is ${ratios[0].toFixed(2)}x the diff with an empty cache and ${ratios[1].toFixed(2)}x with the cache filled (target at most ${TARGET_RATIO}x in both)` +
      (problems.length ? '; but the checks FAILED (see above)' : ''),
  );
  if (problems.length) process.exitCode = 1;
}

main().catch((error) => {
  console.error(error instanceof Error ? error.message : error);
  process.exitCode = 1;
});
