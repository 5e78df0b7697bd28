import { createHash } from 'node:crypto';

/**
 * A query sheet is the list of open discrepancies sent to the person who can decide them (often the
 * researcher), one cell per row, with empty columns for the answer. The same columns, in this order,
 * are written to CSV and .xlsx and expected back on import.
 */
export const QUESTION_COLUMNS = ['query', 'table', 'key', 'column', 'value', 'rule', 'severity', 'message'] as const;
export const ANSWER_COLUMNS = ['decision', 'new_value', 'comment', 'answered_by', 'answered_on'] as const;
export const SHEET_COLUMNS = [...QUESTION_COLUMNS, ...ANSWER_COLUMNS] as const;
export type SheetColumn = (typeof SHEET_COLUMNS)[number];

/**
 * What the answerer can decide about a value: it is right as delivered (`keep`), it should be
 * `new_value` (`change`), or the true value is unknown and it should be missing (`missing`).
 */
export const DECISIONS = ['keep', 'change', 'missing'] as const;
export type Decision = (typeof DECISIONS)[number];

/** One open question about one cell. `value` is the cell's text now (null: missing). */
export interface Query {
  id: string;
  table: string;
  key: string;
  column: string;
  value: string | null;
  rule: string;
  severity: string;
  message: string;
}

/** One row read back from an answered sheet, every cell as text ('' when blank). */
export interface SheetRow {
  /** The row's number as the answerer sees it: the spreadsheet row, or the CSV line. */
  row: number;
  cells: Record<SheetColumn, string>;
}

/**
 * A query's id names the question, not the answer: the same discrepancy exported twice gets the same
 * id, so its approval note (notes/<id>.md) marks it answered and later exports leave it out.
 *
 * @example queryId('baseline', 'KV-00188', 'height_cm', 'maximum') // "Q-…" (10 hex digits)
 */
export function queryId(table: string, key: string, column: string, rule: string): string {
  const digest = createHash('sha256').update([table, key, column, rule].join('\u0000')).digest('hex');
  return `Q-${digest.slice(0, 10)}`;
}

/** The sheet row of a query, answer columns blank. */
export function sheetCells(query: Query): Record<SheetColumn, string> {
  return {
    query: query.id,
    table: query.table,
    key: query.key,
    column: query.column,
    value: query.value ?? '',
    rule: query.rule,
    severity: query.severity,
    message: query.message,
    decision: '',
    new_value: '',
    comment: '',
    answered_by: '',
    answered_on: '',
  };
}

/** How to answer, for the sheet's instructions (the .xlsx carries them on a second sheet). */
export const ANSWER_GUIDE = [
  'Each row is one value that breaks a rule of the codebook. Please answer in the columns decision to answered_on and leave the others as they are.',
  'decision: keep (the value is right as it is), change (it should be new_value), or missing (the true value is unknown).',
  'new_value: the right value, only with decision change. Write it as it should be stored, e.g. 71.2 or 2.',
  'comment: how you know (the source you checked, e.g. the paper form or the clinic record). It is kept as the evidence of your decision.',
  'answered_by: your id as the data project lists you (people.yaml). answered_on: the date of your answer, YYYY-MM-DD.',
  'Leave a row blank if you cannot answer it yet; it will be asked again.',
];
