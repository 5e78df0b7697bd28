import path from 'node:path';
import { ErrataError } from '../errors.js';
import { Session } from '../engine/session.js';
import { commitsBetween, listBlobsAt, type CommitInfo } from '../git/repo.js';
import { RevisionTree } from '../git/tree.js';
import { correctProject, prepareProject, type BuildProgress, type PreparedProject, type ProjectBuild, type TableBuild } from '../build/build-project.js';
import type { RawCache } from '../build/load-raw.js';
import { compareOutputs } from '../build/verify.js';
import { discardStaged, stageOutputs } from '../build/write-outputs.js';
import { loadNotes } from '../project/notes.js';
import { loadPeople } from '../project/people.js';
import { explainChangedCells } from './cell-rules.js';
import { checkCorrections } from './correction-rules.js';
import { checkFileHistory } from './file-rules.js';
import { readCachedResult, resultCacheId, writeCachedResult, type ResultCache } from '../diff/result-cache.js';
import type { Finding, ReviewResult } from './types.js';

export interface ReviewOptions {
  root: string;
  /** Commit ids (resolved). */
  base: string;
  head: string;
  workDir: string;
  cache?: RawCache;
  /** Finished reviews kept by their two commit ids, so a repeated review of the same range is read back. */
  reviewCache?: ResultCache;
  onProgress?: (event: BuildProgress | { phase: 'review'; step: string }) => void;
  /**
   * For a caller that wants more from the same two builds (the report diffs them): runs once both
   * ends are built (base tables prefixed b_, head h_), before the review reads them. Not run when
   * the review is read from its cache.
   */
  withBuilt?: (session: Session, base: TableBuild[], head: TableBuild[]) => Promise<void>;
  /** Likewise, once both ends are loaded as delivered and before they are built (head prefixed h_). */
  withLoaded?: (session: Session, base: PreparedProject | null, head: PreparedProject) => Promise<void>;
}

/**
 * Review what the commits from base to head do to the data: history rules commit by commit, then both
 * ends built in one session and every changed clean cell traced to a correction or a delivery, then the
 * corrections' approvals and authority, then the committed outputs against the rebuild.
 */
export async function reviewRange(options: ReviewOptions): Promise<ReviewResult> {
  // Two commits fix everything a review reads, so its answer can be kept under their ids.
  const cacheId = options.reviewCache ? resultCacheId({ review: [options.base, options.head] }) : '';
  const cached = options.reviewCache ? readCachedResult<ReviewResult>(options.reviewCache, cacheId) : null;
  if (cached) return cached;
  const result = await reviewCommits(options);
  if (options.reviewCache) writeCachedResult(options.reviewCache, cacheId, result);
  return result;
}

async function reviewCommits(options: ReviewOptions): Promise<ReviewResult> {
  const { root, base, head } = options;
  const blobs = path.join(root, '.errata', 'cache', 'blobs');
  const baseTree = await RevisionTree.at(root, base, blobs);
  const headTree = await RevisionTree.at(root, head, blobs);
  const commits = await commitsBetween(root, base, head);
  options.onProgress?.({ phase: 'review', step: 'history' });
  const findings: Finding[] = await checkFileHistory(root, base, commits);

  const session = await Session.open({ spillDir: path.join(options.workDir, 'spill'), memoryLimit: '2GB' });
  try {
    const prepare = (tree: RevisionTree, prefix: string) =>
      prepareProject(session, tree, { prefix, cache: options.cache, onProgress: options.onProgress });
    const basePrepared = await prepare(baseTree, 'b_').catch((error) => {
      if (error instanceof ErrataError && (error.code === 'PROJECT_NOT_FOUND' || error.code === 'INPUT_MISSING' || error.code === 'PROJECT_INVALID')) return null;
      throw error;
    });
    const headPrepared: PreparedProject = await prepare(headTree, 'h_');
    await session.lockDown([options.workDir]);
    await options.withLoaded?.(session, basePrepared, headPrepared);
    // Raw tables are needed only to credit a new delivery; when every input is the same blob at both
    // ends there is none, and the build need not keep them.
    const inputsOf = (p: PreparedProject | null) => JSON.stringify((p?.tables ?? []).map((t) => [t.table.name, t.inputs.map((i) => i.blob)]));
    const rawChanged = inputsOf(basePrepared) !== inputsOf(headPrepared);
    const baseTables = basePrepared ? await correctProject(session, basePrepared, { onProgress: options.onProgress, keepRaw: rawChanged }) : [];
    const headTables = await correctProject(session, headPrepared, { onProgress: options.onProgress, keepRaw: rawChanged });
    await options.withBuilt?.(session, baseTables, headTables);

    const baseBlobs = new Map((basePrepared?.tables ?? []).flatMap((t) => t.sources.map((s) => [s.path, s.blob] as const)));
    const addedBy = await firstCommitOf(root, commits);
    const notes = await loadNotes(headTree);
    const people = new Map((await loadPeople(headTree)).map((p) => [p.id, p]));

    let cellsChanged = 0;
    let byCorrection = 0;
    let byDelivery = 0;
    const reviewed: string[] = [];
    for (const table of headTables) {
      options.onProgress?.({ phase: 'review', step: table.config.name });
      const fresh = table.corrections.filter((c) => baseBlobs.get(c.file) !== table.sources.find((s) => s.path === c.file)?.blob);
      reviewed.push(...fresh.map((c) => c.file));
      for (const conflict of table.conflicts) {
        findings.push({
          rule: 'guarded-edit-conflict',
          severity: 'error',
          table: table.config.name,
          key: conflict.key,
          column: conflict.column,
          file: conflict.file,
          correction: conflict.correction,
          message: `${conflict.file}:${conflict.line}: (${conflict.key}, ${conflict.column}) expected ${conflict.expected ?? '∅'}, found ${conflict.problem === 'row-missing' ? 'no such row' : (conflict.found ?? '∅')}`,
        });
      }
      const before = baseTables.find((t: TableBuild) => t.config.name === table.config.name);
      const cells = await explainChangedCells(session, before, table, new Set(fresh.map((c) => c.id)), { rawChanged });
      cellsChanged += cells.cellsChanged;
      byCorrection += cells.byCorrection;
      byDelivery += cells.byDelivery;
      findings.push(...cells.findings);
      findings.push(...(await checkCorrections(session, table, fresh, addedBy, notes, people)));
    }

    options.onProgress?.({ phase: 'review', step: 'outputs' });
    findings.push(...(await checkCommittedOutputs({ session, config: headPrepared.config, tables: headTables, conflicts: [] }, headTree, options.workDir)));
    return { base, head, commits: commits.length, cellsChanged, cellsByCorrection: byCorrection, cellsByDelivery: byDelivery, correctionsReviewed: reviewed, findings };
  } finally {
    session.close();
  }
}

/** For each file touched in the range, the first commit (oldest) in which it appears with new content. */
export async function firstCommitOf(root: string, commits: readonly CommitInfo[]): Promise<Map<string, CommitInfo>> {
  const first = new Map<string, CommitInfo>();
  let previous = new Map<string, string>();
  if (commits[0]?.parents[0]) previous = new Map((await listBlobsAt(root, commits[0].parents[0], 'corrections')).map((e) => [e.path, e.oid]));
  for (const commit of commits) {
    const current = new Map((await listBlobsAt(root, commit.oid, 'corrections')).map((e) => [e.path, e.oid]));
    for (const [file, oid] of current) if (previous.get(file) !== oid && !first.has(file)) first.set(file, commit);
    previous = current;
  }
  return first;
}

/** A committed clean output that is not what the rebuild writes is a hand edit (or a stale build). */
async function checkCommittedOutputs(build: ProjectBuild, tree: RevisionTree, workDir: string): Promise<Finding[]> {
  const outputs = build.tables.flatMap((t) => [t.config.output, t.config.lineage]);
  const present = await Promise.all(outputs.map((o) => tree.read(o)));
  if (present.every((p) => p === null)) return [];
  const staged = await stageOutputs(build, workDir, workDir);
  try {
    const mismatches = await compareOutputs(staged, tree);
    return mismatches.map((m) => ({
        rule: 'clean-differs-from-rebuild' as const,
        severity: 'error' as const,
        file: m.path,
        commit: tree.commit,
        message:
          m.problem === 'missing'
            ? `${m.path} is not committed although other clean outputs are; run errata build and commit`
            : `${m.path}${m.line ? `:${m.line}` : ''} differs from the rebuild${m.line ? ` (committed ${m.committed ?? ''}, rebuild ${m.rebuilt ?? ''})` : ''}`,
      }));
  } finally {
    discardStaged(staged);
  }
}
