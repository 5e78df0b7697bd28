/** Styling the terminal renderers may apply; the CLI passes chalk, tests and files pass `plain`. */
export interface Paint {
  bold(text: string): string;
  dim(text: string): string;
  red(text: string): string;
  green(text: string): string;
  yellow(text: string): string;
  cyan(text: string): string;
}

const same = (text: string) => text;
export const plain: Paint = { bold: same, dim: same, red: same, green: same, yellow: same, cyan: same };

/** A value as shown to people: missing is ∅ (never confused with the text "NA" or an empty string, shown as ""). */
export function showValue(value: string | null | undefined): string {
  if (value === null || value === undefined) return '∅';
  if (value === '') return '""';
  return /^\s|\s$|[\n\t]/.test(value) ? JSON.stringify(value) : value;
}

/** Text safe inside a Markdown table cell: markup characters escaped, line breaks (any kind) as spaces. */
export function escapeMarkdownCell(text: string): string {
  return text.replace(/[\\`*_{}[\]<>|#!~&]/g, (ch) => `\\${ch}`).replace(/\r\n?|[\n\u2028\u2029]/g, ' ');
}

/** CSV field in the fixed dialect: quoted when it holds a delimiter, quote or line break. */
export function csvField(value: string | number | null | undefined): string {
  if (value === null || value === undefined) return '';
  const text = String(value);
  return /[",\r\n]/.test(text) || text === '' ? `"${text.replaceAll('"', '""')}"` : text;
}
