/** How much a discrepancy matters: an error fails `errata check` (exit 1); a warning is reported only. */
export type Severity = 'error' | 'warning';

/**
 * One value (or row, or column) that breaks the codebook. `rule` names the broken constraint
 * ("type", "required", "unique", "minimum", "maximum", "minLength", "maxLength", "pattern", "enum",
 * "primaryKey", "field") or, for a cross-variable rule, the rule's own name. `key` is the row's key
 * (null for a discrepancy about a whole column); `value` is the cell's text (null when it has none).
 */
export interface Discrepancy {
  key: string | null;
  column: string | null;
  value: string | null;
  rule: string;
  severity: Severity;
  message: string;
}

/** The discrepancies of one table, in a stable order: columns, then key constraints, fields, rules. */
export interface TableCheck {
  table: string;
  /** What was checked: "clean", "raw" or the file's path. */
  source: string;
  /** The key columns naming rows; empty when rows are named by position ("row 3"). */
  keyColumns: string[];
  rows: number;
  discrepancies: Discrepancy[];
}

