import type { AuditEntry } from '../audit/audit-trail.js';
import type { Severity } from '../check/types.js';
import type { TableDiff } from '../diff/types.js';
import type { TableComparison } from '../profile/types.js';
import type { ApprovalNote } from '../project/notes.js';
import type { ReviewResult } from '../review/types.js';

/** How the report's range was chosen, so the page can say it. */
export type RangeChoice = 'given' | 'merge-base' | 'first-correction' | 'whole-history';

export interface ReportRange {
  /** Commit ids (resolved). */
  base: string;
  head: string;
  choice: RangeChoice;
}

/** Discrepancies of one codebook rule, counted on the raw delivery and on the clean build. */
export interface RuleCount {
  rule: string;
  severity: Severity;
  raw: number;
  clean: number;
}

export interface ReportTable {
  name: string;
  /** Raw against clean, variable by variable, at the head of the range. */
  comparison: TableComparison;
  /** Null when the table has no codebook to check against. */
  discrepancies: RuleCount[] | null;
}

/** Everything one report shows, gathered from the core; plain data, rendered by render/report-html.ts. */
export interface ReportData {
  range: ReportRange;
  tables: ReportTable[];
  /** The cell-level diff of the clean builds, base against head; cells up to the gathering limit. */
  diffs: TableDiff[];
  /** Every correction at head, in the order they apply. */
  audit: AuditEntry[];
  /** Every approval note at head, by id order. */
  notes: ApprovalNote[];
  review: ReviewResult;
}
