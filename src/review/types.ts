/** The rules a review checks, by name; the names appear in every rendering and in JSON. */
export type RuleName =
  | 'change-without-correction'
  | 'correction-without-approval'
  | 'note-not-found'
  | 'note-dated-after-commit'
  | 'approver-unknown'
  | 'approver-without-authority'
  | 'raw-modified'
  | 'raw-deleted'
  | 'note-modified'
  | 'note-deleted'
  | 'correction-edited'
  | 'correction-deleted'
  | 'clean-differs-from-rebuild'
  | 'guarded-edit-conflict'
  | 'correction-changes-nothing';

export type Severity = 'error' | 'warning';

/** One thing a reviewer must look at, with the cell, file or commit concerned. */
export interface Finding {
  rule: RuleName;
  severity: Severity;
  message: string;
  table?: string;
  key?: string;
  column?: string;
  file?: string;
  commit?: string;
  correction?: string;
}

export interface ReviewResult {
  base: string;
  head: string;
  commits: number;
  /** Cells that differ between the clean data at base and at head, plus rows added or removed. */
  cellsChanged: number;
  /** Of those, explained by a correction added in the range, or by a new raw delivery. */
  cellsByCorrection: number;
  cellsByDelivery: number;
  correctionsReviewed: string[];
  findings: Finding[];
}

export const RULE_TEXT: Record<RuleName, string> = {
  'change-without-correction': 'a clean cell changed without a correction or a new delivery to explain it',
  'correction-without-approval': 'a correction cites no approval note',
  'note-not-found': 'the cited approval note does not exist at head',
  'note-dated-after-commit': 'the approval note is dated after the commit that added the correction',
  'approver-unknown': 'the approver is not in people.yaml',
  'approver-without-authority': 'the approver may not approve a column the correction changes',
  'raw-modified': 'a raw delivery was modified in place',
  'raw-deleted': 'a raw delivery was deleted',
  'note-modified': 'a committed approval note was modified (append a new note instead)',
  'note-deleted': 'a committed approval note was deleted',
  'correction-edited': 'a correction already on the base branch was edited in place (add a new correction instead)',
  'correction-deleted': 'a correction already on the base branch was deleted',
  'clean-differs-from-rebuild': 'committed clean output differs from the rebuild (hand edit?)',
  'guarded-edit-conflict': 'a guarded edit no longer matches the cell it was decided on',
  'correction-changes-nothing': 'a correction changes no cell',
};
