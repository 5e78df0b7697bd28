import type { Session } from '../engine/session.js';
import { ident } from '../engine/sql.js';
import type { TableBuild } from '../build/build-project.js';
import type { Correction } from '../corrections/types.js';
import type { ApprovalNote } from '../project/notes.js';
import type { Person } from '../project/people.js';
import type { CommitInfo } from '../git/repo.js';
import type { Finding } from './types.js';

/**
 * Each correction added or changed in the range cites a note that exists at head, dated no later than
 * the commit that added the correction, by a person who may approve every column it changes (a
 * deleted row changes every column). A correction that changes nothing is a warning.
 */
export async function checkCorrections(
  session: Session,
  head: TableBuild,
  corrections: readonly Correction[],
  addedBy: ReadonlyMap<string, CommitInfo>,
  notes: ReadonlyMap<string, ApprovalNote>,
  people: ReadonlyMap<string, Person>,
): Promise<Finding[]> {
  const findings: Finding[] = [];
  const table = head.config.name;
  for (const correction of corrections) {
    const at = { table, file: correction.file, correction: correction.id, commit: addedBy.get(correction.file)?.oid };
    const changes = await session.all<{ column: string | null; change: string; n: bigint }>(
      `SELECT "column", "change", count(*) AS n FROM ${ident(head.lineageTable)} WHERE "correction" = $1 GROUP BY ALL ORDER BY ALL`,
      [correction.id],
    );
    if (changes.length === 0) {
      findings.push({ rule: 'correction-changes-nothing', severity: 'warning', ...at, message: `${correction.file} changes no cell at head` });
    }
    if (!correction.approval) {
      findings.push({ rule: 'correction-without-approval', severity: 'error', ...at, message: `${correction.file} cites no approval note (add approval: NOTE_ID)` });
      continue;
    }
    const note = notes.get(correction.approval);
    if (!note) {
      findings.push({ rule: 'note-not-found', severity: 'error', ...at, message: `${correction.file} cites ${correction.approval}, which is not in notes/ at head` });
      continue;
    }
    const commit = addedBy.get(correction.file);
    if (commit) {
      const committedOn = localDate(commit);
      if (note.date > committedOn) {
        findings.push({
          rule: 'note-dated-after-commit',
          severity: 'error',
          ...at,
          message: `${correction.file} was committed on ${committedOn} (${commit.oid.slice(0, 7)}) but its note ${note.id} is dated ${note.date}`,
        });
      }
    }
    const person = people.get(note.approver);
    if (!person) {
      findings.push({ rule: 'approver-unknown', severity: 'error', ...at, message: `${note.id} is approved by "${note.approver}", who is not in people.yaml` });
      continue;
    }
    const authority = person.authority.get(table);
    const columns = new Set<string>();
    let wholeRows = false;
    for (const c of changes) {
      if (c.change === 'row-deleted') wholeRows = true;
      else if (c.column) columns.add(c.column);
    }
    const lacking = authority === 'all' ? [] : [...columns].filter((c) => !authority?.includes(c));
    if (wholeRows && authority !== 'all') lacking.push('(whole rows: deleting a row changes every column)');
    if (lacking.length) {
      findings.push({
        rule: 'approver-without-authority',
        severity: 'error',
        ...at,
        column: lacking.join(', '),
        message: `${person.name} (${note.approver}) may not approve ${table}.${lacking.join(`, ${table}.`)}, which ${correction.file} changes`,
      });
    }
  }
  return findings;
}

/** The commit's date in its author's own time zone, YYYY-MM-DD, as a note's date is written. */
function localDate(commit: CommitInfo): string {
  const offsetMinutes = -commit.author.timezoneOffset;
  return new Date((commit.author.timestamp + offsetMinutes * 60) * 1000).toISOString().slice(0, 10);
}
