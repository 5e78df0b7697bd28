import { listBlobsAt, type CommitInfo } from '../git/repo.js';
import type { Finding } from './types.js';

/**
 * History rules, checked commit by commit so a change that is later undone is still caught: raw
 * deliveries and approval notes are append-only; a correction that already exists on the base
 * branch is never edited or deleted in place.
 */
export async function checkFileHistory(root: string, base: string, commits: readonly CommitInfo[]): Promise<Finding[]> {
  const findings: Finding[] = [];
  const onBase = new Map((await listBlobsAt(root, base, 'corrections')).map((e) => [e.path, e.oid]));
  const snapshot = async (commit: string) => {
    const [raw, notes, corrections] = await Promise.all(['raw', 'notes', 'corrections'].map((p) => listBlobsAt(root, commit, p)));
    return { raw: toMap(raw), notes: toMap(notes), corrections: toMap(corrections) };
  };
  let previous = await snapshot(commits[0]?.parents[0] ?? base);
  for (const commit of commits) {
    const current = await snapshot(commit.oid);
    const short = commit.oid.slice(0, 7);
    for (const [file, oid] of previous.raw) {
      const now = current.raw.get(file);
      if (now === undefined) findings.push({ rule: 'raw-deleted', severity: 'error', file, commit: commit.oid, message: `${file} was deleted in ${short}` });
      else if (now !== oid) findings.push({ rule: 'raw-modified', severity: 'error', file, commit: commit.oid, message: `${file} was changed in ${short}; deliver a new file instead` });
    }
    for (const [file, oid] of previous.notes) {
      const now = current.notes.get(file);
      if (now === undefined) findings.push({ rule: 'note-deleted', severity: 'error', file, commit: commit.oid, message: `${file} was deleted in ${short}` });
      else if (now !== oid) findings.push({ rule: 'note-modified', severity: 'error', file, commit: commit.oid, message: `${file} was changed in ${short}; write a new note that supersedes it` });
    }
    for (const [file, oid] of onBase) {
      if (previous.corrections.get(file) !== oid) continue;
      const now = current.corrections.get(file);
      if (now === undefined) findings.push({ rule: 'correction-deleted', severity: 'error', file, commit: commit.oid, message: `${file} (on the base branch) was deleted in ${short}; add a correction that reverses it instead` });
      else if (now !== oid) findings.push({ rule: 'correction-edited', severity: 'error', file, commit: commit.oid, message: `${file} (on the base branch) was edited in ${short}; add a new correction instead` });
    }
    previous = current;
  }
  return findings;
}

function toMap(entries: Array<{ path: string; oid: string }>): Map<string, string> {
  return new Map(entries.map((e) => [e.path, e.oid]));
}
