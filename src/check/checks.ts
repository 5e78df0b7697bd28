import type { Severity } from './types.js';

/** What a discrepancy found by a check is told from: the cell's text and, for `unique`, a count. */
export interface Found {
  value: string | null;
  count: number | null;
}

/** A check: which rule it tests, on which column, and how its discrepancies are worded. */
export interface Check {
  rule: string;
  severity: Severity;
  column: string | null;
  message: (found: Found) => string;
}

/**
 * A check on a single value, written over the text `v` of one distinct value of the column. It is
 * evaluated once per distinct value, and the rows holding an offending value are then found by a join.
 */
export interface ValueCheck extends Check {
  kind: 'value';
  condition: string;
}

/** A check on whole rows: each row of `source` where `where` holds is a discrepancy. */
export interface RowCheck extends Check {
  kind: 'row';
  /** A relation with the numbered table's helper columns; the numbered table when absent. */
  source?: string;
  where: string;
  /** SQL for the text reported as the value. */
  value: string;
  /** SQL for a count the message needs (rows sharing a key). */
  count?: string;
}

/** Helper columns the checks' SQL uses beside the table's own columns. */
export const HELPER = {
  row: '__errata_row',
  key: '__errata_key',
  sort: (i: number) => `__errata_sort${i}`,
  count: '__errata_count',
  value: '__errata_value',
  text: (i: number) => `__errata_text${i}`,
  repeated: '__errata_repeated',
} as const;
