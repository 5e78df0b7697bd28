/**
 * Spreadsheet formula neutralisation for text written to CSV or query sheets.
 *
 * A spreadsheet opening a CSV runs a cell beginning with `=`, `+`, `-` or `@` (and, in some programs,
 * a tab or carriage return) as a formula, which lets data from an untrusted delivery run commands on
 * a reviewer's machine (OWASP, "CSV Injection"). Such a cell is written with a leading apostrophe, which
 * spreadsheets show as text. So that the value stays recoverable, a cell that itself begins with an
 * apostrophe is prefixed too: restoring is then always "drop one leading apostrophe".
 * Numbers ("-99", "+1.5", "-1e3") are not formulas and are left alone.
 */

/** The first characters that make a spreadsheet treat a cell as a formula, and the apostrophe itself. */
export const FORMULA_STARTS: readonly string[] = ['=', '+', '-', '@', '\t', '\r', "'"];

const PLAIN_NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/** The text as a spreadsheet will show it without running it, e.g. `=1+1` → `'=1+1`; `-99` stays. */
export function neutraliseFormula(text: string): string {
  if (!FORMULA_STARTS.includes(text.charAt(0)) || PLAIN_NUMBER.test(text)) return text;
  return `'${text}`;
}

/** The original text of a neutralised cell: `'=1+1` → `=1+1`, `''x` → `'x`. */
export function restoreFormula(text: string): string {
  return text.startsWith("'") ? text.slice(1) : text;
}
