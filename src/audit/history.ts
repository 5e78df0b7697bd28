import { hasCommits, pathHistory, type CommitInfo } from '../git/repo.js';
import type { ProjectTree } from '../git/tree.js';
import type { ApprovalNote } from '../project/notes.js';
import type { Correction } from '../corrections/types.js';

/** When and by whom a file entered the history. */
export interface Introduced {
  commit: string;
  author: string;
  email: string;
  /** ISO 8601 in UTC, from the commit's author time. */
  date: string;
}

export function introducedBy(commit: CommitInfo): Introduced {
  return {
    commit: commit.oid,
    author: commit.author.name,
    email: commit.author.email,
    date: new Date(commit.author.timestamp * 1000).toISOString().replace('.000Z', 'Z'),
  };
}

/** For each correction and note file, the commit that added it (absent when not committed yet). */
export async function fileOrigins(tree: ProjectTree): Promise<Map<string, Introduced>> {
  const ref = tree.commit ?? 'HEAD';
  if (!tree.commit && !(await hasCommits(tree.root))) return new Map();
  const history = await pathHistory(tree.root, ['corrections', 'notes'], ref);
  return new Map([...history].map(([file, h]) => [file, introducedBy(h.added)]));
}

export interface CorrectionAudit {
  correction: Correction;
  note?: ApprovalNote;
  introduced?: Introduced;
}

export function auditOf(correction: Correction, notes: Map<string, ApprovalNote>, origins: Map<string, Introduced>): CorrectionAudit {
  return {
    correction,
    note: correction.approval ? notes.get(correction.approval) : undefined,
    introduced: origins.get(correction.file),
  };
}
