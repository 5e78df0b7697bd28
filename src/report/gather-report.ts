import path from 'node:path';
import { auditTrail, type AuditEntry } from '../audit/audit-trail.js';
import { fileOrigins } from '../audit/history.js';
import { rawName } from '../build/build-project.js';
import type { RawCache } from '../build/load-raw.js';
import type { Session } from '../engine/session.js';
import { checkLoadedTables, type CheckTarget, type ProjectCheck } from '../check/check-project.js';
import { diffBuilt, type RevisionDiff } from '../diff/revision-diff.js';
import { RevisionTree } from '../git/tree.js';
import { compareProfiles } from '../profile/compare-profiles.js';
import { profileBuiltTables, profileLoadedTables } from '../profile/profile-project.js';
import type { TableProfile } from '../profile/types.js';
import type { ProjectConfig } from '../project/config.js';
import { loadNotes } from '../project/notes.js';
import { loadPeople } from '../project/people.js';
import { reviewRange } from '../review/review-range.js';
import type { ReportData, ReportRange, RuleCount } from './types.js';

export type ReportPhase = 'profile' | 'check' | 'diff' | 'review' | 'audit';

/** What the report is gathering now, and for which table when the step is about one. */
export interface ReportProgress {
  phase: ReportPhase;
  table?: string;
}

export interface GatherReportOptions {
  root: string;
  range: ReportRange;
  /** At most this many changed cells are read from the diff (all are counted). */
  cellLimit: number;
  /** Where DuckDB may spill; the only folder SQL can touch once inputs are loaded. */
  workDir: string;
  cache?: RawCache;
  onProgress?: (event: ReportProgress) => void;
}

/**
 * Gather what a report shows, at the head of the range unless said otherwise: the raw-against-clean
 * profile of every table, the codebook discrepancies on both sides counted by rule, the cell-level diff
 * from base to head, the review of the range, the audit trail and the approval notes. Nothing is written.
 *
 * @example
 *   const data = await gatherReport({ root, range: await reportRange(root), cellLimit: 100_000, workDir });
 *   renderReportHtml(data);
 */
export async function gatherReport(options: GatherReportOptions): Promise<ReportData> {
  const { root, range } = options;
  const blobs = path.join(root, '.errata', 'cache', 'blobs');
  const headTree = await RevisionTree.at(root, range.head, blobs);
  const progress = (phase: ReportPhase) => (event: object) => options.onProgress?.({ phase, table: 'table' in event ? String(event.table) : undefined });

  // Everything is read from the two builds the review makes, in its session: the head's raw
  // profile and checks once it is loaded, its clean profile, checks and audit trail and the diff
  // once both ends are built.
  let rawCheck: ProjectCheck | null = null;
  let cleanCheck: ProjectCheck | null = null;
  let audit: AuditEntry[] = [];
  let rawProfiles = new Map<string, TableProfile>();
  let cleanProfiles: Array<{ name: string } & Awaited<ReturnType<typeof profileBuiltTables>>[number]> = [];
  let headConfig: ProjectConfig | null = null;
  const notes = await loadNotes(headTree);
  const built: { diff?: RevisionDiff } = {};
  // No review cache is passed, so the review always builds both ends and runs these.
  const review = await reviewRange({
    root,
    base: range.base,
    head: range.head,
    workDir: options.workDir,
    cache: options.cache,
    onProgress: progress('review'),
    withLoaded: async (session, _base, head) => {
      headConfig = head.config;
      const targets = head.tables.map((t) => ({ config: t.table, codebook: t.codebook, table: rawName(t.table, head.prefix) }));
      rawCheck = await checkOrNone(session, targets, { source: 'raw', onProgress: progress('check') });
      rawProfiles = await profileLoadedTables(session, head, { keepText: true, onProgress: progress('profile') });
    },
    withBuilt: async (session, base, head) => {
      cleanProfiles = (await profileBuiltTables(session, head, progress('profile'))).map((p, i) => ({ name: head[i].config.name, ...p }));
      const targets = head.map((b) => ({ config: b.config, codebook: b.codebook, table: b.cleanTable }));
      const conflicts = head.flatMap((b) => b.conflicts);
      cleanCheck = await checkOrNone(session, targets, { source: 'clean', conflicts, onProgress: progress('check') });
      options.onProgress?.({ phase: 'audit' });
      const people = new Map((await loadPeople(headTree)).map((p) => [p.id, p]));
      audit = await auditTrail({ session, config: headConfig!, tables: head, conflicts }, notes, await fileOrigins(headTree), people);
      built.diff = await diffBuilt(session, base, head, { cellLimit: options.cellLimit, onProgress: progress('diff') });
    },
  });
  const tables = cleanProfiles.map(({ name, clean, renamed }) => ({
    name,
    comparison: compareProfiles(rawProfiles.get(name)!, clean!, renamed),
    discrepancies: countByRule(rawCheck, cleanCheck, name),
  }));
  const { diff } = built;
  if (!diff) throw new Error('the review did not build both ends');
  return {
    range,
    tables,
    diffs: diff.diffs,
    audit,
    notes: [...notes.values()].sort((a, b) => (a.id < b.id ? -1 : a.id > b.id ? 1 : 0)),
    review,
  };
}

/** A project without any codebook has nothing to check; the report says so instead of failing. */
async function checkOrNone(session: Session, targets: readonly CheckTarget[], options: Parameters<typeof checkLoadedTables>[2]): Promise<ProjectCheck | null> {
  if (!targets.some((t) => t.codebook)) return null;
  return (await checkLoadedTables(session, targets, options)).result;
}

/** Discrepancies per rule on each side, rules in order of first appearance (raw first). */
export function countByRule(raw: ProjectCheck | null, clean: ProjectCheck | null, table: string): RuleCount[] | null {
  const rawTable = raw?.tables.find((t) => t.table === table);
  const cleanTable = clean?.tables.find((t) => t.table === table);
  if (!rawTable && !cleanTable) return null;
  const counts = new Map<string, RuleCount>();
  const add = (side: 'raw' | 'clean', list: typeof rawTable) => {
    for (const d of list?.discrepancies ?? []) {
      const entry = counts.get(d.rule) ?? { rule: d.rule, severity: d.severity, raw: 0, clean: 0 };
      entry[side] += 1;
      if (d.severity === 'error') entry.severity = 'error';
      counts.set(d.rule, entry);
    }
  };
  add('raw', rawTable);
  add('clean', cleanTable);
  return [...counts.values()];
}
