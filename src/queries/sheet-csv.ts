import { ErrataError } from '../errors.js';
import { neutraliseFormula, restoreFormula } from '../engine/formula-guard.js';
import { SHEET_COLUMNS, type SheetColumn, type SheetRow } from './query-sheet.js';
import { rowsFromTable } from './sheet-rows.js';

/**
 * A query sheet as CSV (RFC 4180: comma, double quotes, CRLF), with a UTF-8 byte order mark so that
 * spreadsheet programs read accented names correctly (common practice). Every cell goes through the
 * formula guard: a value such as `=HYPERLINK(…)` from an untrusted delivery is shown, never run.
 */
export function writeSheetCsv(rows: ReadonlyArray<Record<SheetColumn, string>>): string {
  const lines = [SHEET_COLUMNS.join(',')];
  for (const row of rows) lines.push(SHEET_COLUMNS.map((c) => csvField(neutraliseFormula(row[c]))).join(','));
  return `\uFEFF${lines.join('\r\n')}\r\n`;
}

function csvField(text: string): string {
  return /[",\r\n]/.test(text) ? `"${text.replaceAll('"', '""')}"` : text;
}

/**
 * Read an answered CSV sheet back. A spreadsheet program may have saved it with semicolons or tabs
 * (as some locales do), with or without the byte order mark, with LF or CRLF; all are accepted.
 * Each cell loses the formula guard's apostrophe again.
 */
export function readSheetCsv(file: string, text: string): SheetRow[] {
  const body = text.startsWith('\uFEFF') ? text.slice(1) : text;
  const records = parseCsv(file, body, delimiterOf(body));
  return rowsFromTable(
    file,
    records.map((r) => ({ row: r.line, cells: r.fields.map(restoreFormula) })),
    'line',
  );
}

function delimiterOf(text: string): string {
  const header = text.slice(0, text.search(/\r?\n|$/));
  for (const candidate of [',', ';', '\t']) if (header.includes(candidate)) return candidate;
  return ',';
}

interface CsvRecord {
  line: number;
  fields: string[];
}

function parseCsv(file: string, text: string, delimiter: string): CsvRecord[] {
  const records: CsvRecord[] = [];
  let fields: string[] = [];
  let field = '';
  let line = 1;
  let recordLine = 1;
  let quoted = false;
  let quoteLine = 0;
  let atFieldStart = true;
  for (let i = 0; i < text.length; i++) {
    const ch = text[i];
    if (quoted) {
      if (ch === '"') {
        if (text[i + 1] === '"') {
          field += '"';
          i++;
        } else quoted = false;
      } else {
        if (ch === '\n') line++;
        field += ch;
      }
      continue;
    }
    if (ch === '"' && atFieldStart) {
      quoted = true;
      quoteLine = line;
      atFieldStart = false;
    } else if (ch === delimiter) {
      fields.push(field);
      field = '';
      atFieldStart = true;
    } else if (ch === '\n' || ch === '\r') {
      if (ch === '\r' && text[i + 1] === '\n') i++;
      fields.push(field);
      if (fields.length > 1 || fields[0] !== '') records.push({ line: recordLine, fields });
      fields = [];
      field = '';
      atFieldStart = true;
      line++;
      recordLine = line;
    } else {
      field += ch;
      atFieldStart = false;
    }
  }
  if (quoted) {
    throw new ErrataError('QUERY_SHEET', 'a quoted field is never closed', {
      hint: 'The sheet was cut off or edited by hand: save it again from the spreadsheet program, or export a fresh sheet.',
      data: { file, line: quoteLine },
    });
  }
  if (field !== '' || fields.length) {
    fields.push(field);
    records.push({ line: recordLine, fields });
  }
  return records;
}
