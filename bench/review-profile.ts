/**
 * Where a review's time goes, next to the diff of the same range: runs the steps of `errata review`
 * and of `errata diff --summary` in this process with the same core functions, timing each phase,
 * and splits the cell tracing into its parts (the clean diff with every cell, the raw diff, the
 * lineage lookups and the matching loop).
 *
 *   npx tsx bench/review-profile.ts [--rows N] [--seed S]
 *
 * Uses (or generates) the project of bench/review.ts, and its parse cache under .errata/ (run the
 * benchmark first for warm-cache figures).
 */
import path from 'node:path';
import { correctProject, prepareProject, type PreparedProject, type TableBuild } from '../src/build/build-project.js';
import { diffTables } from '../src/diff/table-diff.js';
import { Session } from '../src/engine/session.js';
import { ident } from '../src/engine/sql.js';
import { commitsBetween } from '../src/git/repo.js';
import { firstCommitOf } from '../src/review/review-range.js';
import { RevisionTree } from '../src/git/tree.js';
import { loadNotes } from '../src/project/notes.js';
import { loadPeople } from '../src/project/people.js';
import { explainChangedCells } from '../src/review/cell-rules.js';
import { checkCorrections } from '../src/review/correction-rules.js';
import { checkFileHistory } from '../src/review/file-rules.js';
import { log, parseWholeOptions } from './measure.js';
import { RAW_FILE, ensureReviewProject } from './review-project.js';



class Clock {
  readonly phases: Array<{ name: string; ms: number }> = [];
  async time<T>(name: string, work: () => Promise<T>): Promise<T> {
    const started = performance.now();
    try {
      return await work();
    } finally {
      this.phases.push({ name, ms: performance.now() - started });
    }
  }
  total(): number {
    return this.phases.reduce((n, p) => n + p.ms, 0);
  }
  print(title: string): void {
    console.log(`\n${title}: ${(this.total() / 1000).toFixed(2)} s`);
    for (const p of this.phases) console.log(`  ${p.name.padEnd(52)} ${(p.ms / 1000).toFixed(2).padStart(7)} s`);
  }
}

async function main(): Promise<void> {
  const args = parseWholeOptions(process.argv.slice(2), { rows: 1_000_000, seed: 20260202 });
  const project = await ensureReviewProject({ ...args, log });
  const { root, base, head } = project;
  const workDir = path.join(root, '.errata', 'tmp');
  const blobs = path.join(root, '.errata', 'cache', 'blobs');
  const cache = { dir: path.join(root, '.errata', 'cache', 'tables'), write: true };

  // ---- the review, step by step as review-range.ts takes them
  const review = new Clock();
  const baseTree = await review.time('open both revisions', () => RevisionTree.at(root, base, blobs));
  const headTree = await RevisionTree.at(root, head, blobs);
  const commits = await review.time('commits in the range', () => commitsBetween(root, base, head));
  await review.time('history rules (checkFileHistory)', () => checkFileHistory(root, base, commits));
  const session = await review.time('open session', () => Session.open({ spillDir: path.join(workDir, 'spill'), memoryLimit: '2GB' }));
  let cellsChanged = 0;
  try {
    const basePrepared = await review.time('load base (prepareProject)', () => prepareProject(session, baseTree, { prefix: 'b_', cache }));
    const headPrepared: PreparedProject = await review.time('load head (prepareProject)', () => prepareProject(session, headTree, { prefix: 'h_', cache }));
    await session.lockDown([workDir]);
    const baseTables = await review.time('build base (correctProject, keeps raw)', () => correctProject(session, basePrepared));
    const headTables = await review.time('build head (correctProject, keeps raw)', () => correctProject(session, headPrepared));
    const baseBlobs = new Map(basePrepared.tables.flatMap((t) => t.sources.map((s) => [s.path, s.blob] as const)));
    const addedBy = await review.time('first commit of each correction', () => firstCommitOf(root, commits));
    const notes = await review.time('load notes', () => loadNotes(headTree));
    const people = new Map((await review.time('load people', () => loadPeople(headTree))).map((p) => [p.id, p]));
    for (const table of headTables) {
      const fresh = table.corrections.filter((c) => baseBlobs.get(c.file) !== table.sources.find((s) => s.path === c.file)?.blob);
      const before = baseTables.find((t: TableBuild) => t.config.name === table.config.name)!;
      const ids = new Set(fresh.map((c) => c.id));
      const cells = await review.time('trace cells (explainChangedCells), in all', () => explainChangedCells(session, before, table, ids, { rawChanged: true }));
      cellsChanged += cells.cellsChanged;
      await review.time('checkCorrections (one lineage query per correction)', () => checkCorrections(session, table, fresh, addedBy, notes, people));

      // The parts of explainChangedCells, each again on its own (not counted in the review's total).
      const parts = new Clock();
      const key = table.config.key;
      const clean = await parts.time('clean diff, every cell materialised in JS', () => diffTables(session, before.cleanTable, table.cleanTable, { key, table: table.config.name }));
      await parts.time('clean diff, counts only (cellLimit 0)', () => diffTables(session, before.cleanTable, table.cleanTable, { key, table: table.config.name, cellLimit: 0 }));
      await parts.time('raw diff (base raw vs head raw)', () => diffTables(session, before.rawTable!, table.rawTable!, { key, table: table.config.name }));
      const lineage = ident(table.lineageTable);
      const list = [...ids];
      const inRange = `"correction" IN (${list.map((_, i) => `$${i + 1}`).join(', ')})`;
      const touched = await parts.time('lineage: touched cells into a JS Set', async () =>
        new Set((await session.all<{ k: string }>(`SELECT "key" || chr(0) || "column" AS k FROM ${lineage} WHERE "change" = 'cell' AND ${inRange}`, list)).map((r) => r.k)),
      );
      await parts.time('matching loop over the changed cells', async () => {
        let n = 0;
        for (const cell of clean.cells) if (touched.has(`${cell.key}\u0000${cell.column}`)) n += 1;
        return n;
      });
      await parts.time('lineage: count of touched cells in SQL (no transfer to JS)', () =>
        session.one(`SELECT count(*) AS n FROM ${lineage} WHERE "change" = 'cell' AND ${inRange}`, list),
      );
      // What the tracing could be: one join of the two clean tables, the changed cells unpivoted and
      // anti-joined against the range's lineage in DuckDB; only counts (and unexplained cells) leave it.
      const traced = await parts.time('sketch: whole tracing in SQL (counts + unexplained)', async () => {
        const columns = table.columns.map((c) => c.name).filter((c) => !key.includes(c) && before.columns.some((b) => b.name === c));
        const k = ident(key[0]);
        const flag = (c: string) => `o.${ident(c)} IS DISTINCT FROM n.${ident(c)}`;
        return session.one<{ changed: bigint; unexplained: bigint }>(
          `WITH j AS (
             SELECT CAST(n.${k} AS VARCHAR) AS "key",
                    list_filter([${columns.map((c) => `CASE WHEN ${flag(c)} THEN '${c}' END`).join(', ')}], x -> x IS NOT NULL) AS cols
             FROM ${ident(before.cleanTable)} AS o JOIN ${ident(table.cleanTable)} AS n ON o.${k} = n.${k}
             WHERE ${columns.map(flag).join(' OR ')}),
           cells AS (SELECT "key", unnest(cols) AS "column" FROM j),
           touched AS (SELECT DISTINCT "key", "column" FROM ${lineage} WHERE "change" = 'cell' AND ${inRange})
           SELECT count(*) AS changed, count(*) FILTER (WHERE t."key" IS NULL) AS unexplained
           FROM cells AS c LEFT JOIN touched AS t ON t."key" = c."key" AND t."column" = c."column"`,
          list,
        );
      });
      if (Number(traced.changed) !== clean.cells.length || Number(traced.unexplained) !== 0) {
        log(`note: the SQL sketch found ${traced.changed} changed cells (${traced.unexplained} unexplained), the diff ${clean.cells.length}`);
      }
      await parts.time('copy of a raw table (what keepRaw adds per end)', async () => {
        await session.run(`CREATE TABLE "__profile_copy" AS SELECT * FROM ${ident(before.rawTable!)}`);
        await session.run('DROP TABLE "__profile_copy"');
      });
      parts.print(`parts of the cell tracing (${clean.cells.length.toLocaleString('en-US')} changed cells; timed separately)`);
    }
  } finally {
    session.close();
  }

  // ---- the diff, as revision-diff.ts does it
  const diff = new Clock();
  const diffSession = await diff.time('open session', () => Session.open({ spillDir: path.join(workDir, 'spill'), memoryLimit: '2GB' }));
  try {
    const b = await diff.time('load base (prepareProject)', () => prepareProject(diffSession, baseTree, { prefix: 'b_', cache }));
    const h = await diff.time('load head (prepareProject)', () => prepareProject(diffSession, headTree, { prefix: 'h_', cache }));
    await diffSession.lockDown([workDir]);
    const bt = await diff.time('build base (correctProject, raw renamed to clean)', () => correctProject(diffSession, b, { keepRaw: false }));
    const ht = await diff.time('build head (correctProject, raw renamed to clean)', () => correctProject(diffSession, h, { keepRaw: false }));
    const summary = await diff.time('diff, counts only (cellLimit 0, with lineage)', () =>
      diffTables(diffSession, bt[0].cleanTable, ht[0].cleanTable, { key: ht[0].config.key, table: ht[0].config.name, cellLimit: 0, lineage: ht[0].lineageTable }),
    );
    if (summary.summary.cells.changed + summary.addedKeys.length + summary.removedKeys.length !== cellsChanged) {
      log(`note: the diff counts ${summary.summary.cells.changed} cells, the review ${cellsChanged}`);
    }
  } finally {
    diffSession.close();
  }

  // Both commands ask for the delivery's blob id once per end (twice when the cache is empty).
  const blobIdMs = await (async () => {
    const started = performance.now();
    await headTree.blobId(RAW_FILE);
    return performance.now() - started;
  })();
  review.print('review, in process');
  diff.print('diff --summary, in process');
  console.log(`\nratio (in process, no start-up): ${(review.total() / diff.total()).toFixed(2)}`);
  console.log(`one tree.blobId(${RAW_FILE}) call, which both commands make once per end inside "load": ${(blobIdMs / 1000).toFixed(2)} s`);
}


main().catch((error) => {
  console.error(error instanceof Error ? (error.stack ?? error.message) : error);
  process.exitCode = 1;
});
