import type ExcelJS from 'exceljs';
import { ErrataError } from '../errors.js';
import { ANSWER_COLUMNS, ANSWER_GUIDE, DECISIONS, SHEET_COLUMNS, type SheetColumn, type SheetRow } from './query-sheet.js';
import { rowsFromTable } from './sheet-rows.js';

const SHEET_NAME = 'Queries';
const WIDTHS: Record<SheetColumn, number> = {
  query: 14, table: 12, key: 14, column: 16, value: 16, rule: 16, severity: 9, message: 48,
  decision: 11, new_value: 14, comment: 40, answered_by: 14, answered_on: 13,
};

/**
 * A query sheet as an .xlsx workbook: the queries on the first sheet, with a drop-down list for the
 * decision and the question columns shaded so the answerer sees where to write; how to answer on the
 * second. Every value is stored as a text cell, which a spreadsheet never runs as a formula.
 */
export async function writeSheetXlsx(rows: ReadonlyArray<Record<SheetColumn, string>>): Promise<Buffer> {
  const workbook = new (await excel()).Workbook();
  // A fixed date keeps two exports of the same queries byte-comparable in what matters to a reader.
  workbook.created = new Date(0);
  workbook.modified = new Date(0);
  const sheet = workbook.addWorksheet(SHEET_NAME, { views: [{ state: 'frozen', ySplit: 1 }] });
  sheet.columns = SHEET_COLUMNS.map((c) => ({ header: c, key: c, width: WIDTHS[c] }));
  sheet.getRow(1).font = { bold: true };
  const answerAt = new Set(ANSWER_COLUMNS.map((c) => SHEET_COLUMNS.indexOf(c) + 1));
  const decisionAt = SHEET_COLUMNS.indexOf('decision') + 1;
  for (const cells of rows) {
    const row = sheet.addRow(SHEET_COLUMNS.map((c) => cells[c]));
    row.eachCell({ includeEmpty: true }, (cell, at) => {
      if (!answerAt.has(at)) cell.fill = { type: 'pattern', pattern: 'solid', fgColor: { argb: 'FFEFEFEF' } };
    });
    row.getCell(decisionAt).dataValidation = {
      type: 'list',
      allowBlank: true,
      formulae: [`"${DECISIONS.join(',')}"`],
      showErrorMessage: true,
      errorTitle: 'decision',
      error: `Choose ${DECISIONS.join(', ')}, or leave it blank.`,
    };
  }
  sheet.autoFilter = { from: { row: 1, column: 1 }, to: { row: 1, column: SHEET_COLUMNS.length } };
  const guide = workbook.addWorksheet('How to answer');
  guide.getColumn(1).width = 110;
  for (const line of ANSWER_GUIDE) guide.addRow([line]).alignment = { wrapText: true };
  return Buffer.from(await workbook.xlsx.writeBuffer());
}

/** Read an answered .xlsx sheet back: the sheet named Queries, or else the first. */
export async function readSheetXlsx(file: string, content: Buffer): Promise<SheetRow[]> {
  const workbook = new (await excel()).Workbook();
  try {
    await workbook.xlsx.load(content as unknown as ArrayBuffer);
  } catch (error) {
    throw new ErrataError('QUERY_SHEET', `cannot read ${file} as an .xlsx workbook: ${(error as Error).message}`, {
      hint: 'Save the sheet as an Excel workbook (.xlsx), or as CSV and import the .csv file.',
      data: { file },
      cause: error,
    });
  }
  const sheet = workbook.getWorksheet(SHEET_NAME) ?? workbook.worksheets[0];
  if (!sheet) throw new ErrataError('QUERY_SHEET', `${file} has no worksheet`, { hint: 'Import the workbook errata queries export wrote.', data: { file } });
  const table: Array<{ row: number; cells: string[] }> = [];
  sheet.eachRow({ includeEmpty: false }, (row, number) => {
    const cells: string[] = [];
    for (let at = 1; at <= Math.max(row.cellCount, SHEET_COLUMNS.length); at++) cells.push(cellText(row.getCell(at).value));
    if (cells.some((c) => c.trim() !== '')) table.push({ row: number, cells });
  });
  return rowsFromTable(`${file} (sheet ${sheet.name})`, table, 'row');
}

/** ExcelJS, loaded only when a workbook is read or written: it takes a third of a second to load. */
async function excel(): Promise<typeof ExcelJS> {
  return (await import('exceljs')).default;
}

/** A cell's value as the text it stands for: a typed number 71.2 is "71.2", a date is YYYY-MM-DD. */
function cellText(value: ExcelJS.CellValue): string {
  if (value === null || value === undefined) return '';
  if (typeof value === 'string') return value;
  if (typeof value === 'number' || typeof value === 'boolean') return String(value);
  if (value instanceof Date) {
    const iso = value.toISOString();
    return iso.endsWith('T00:00:00.000Z') ? iso.slice(0, 10) : iso;
  }
  if ('richText' in value) return value.richText.map((r) => r.text).join('');
  if ('formula' in value || 'sharedFormula' in value) return value.result === undefined ? '' : cellText(value.result as ExcelJS.CellValue);
  if ('text' in value) return String(value.text);
  return '';
}
