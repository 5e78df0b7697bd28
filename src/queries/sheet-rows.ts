import { ErrataError } from '../errors.js';
import { QUESTION_COLUMNS, SHEET_COLUMNS, type SheetColumn, type SheetRow } from './query-sheet.js';

/**
 * Turn a sheet's raw rows (the first being the header) into rows addressed by column name. Columns may
 * come in any order and extra columns the answerer added are ignored; a missing column is an error,
 * since without it no answer can be matched to its question.
 */
export function rowsFromTable(file: string, table: ReadonlyArray<{ row: number; cells: string[] }>, unit: 'line' | 'row'): SheetRow[] {
  if (table.length === 0) {
    throw new ErrataError('QUERY_SHEET', 'the sheet is empty', { hint: 'Import the sheet errata queries export wrote, with its header row.', data: { file } });
  }
  const [header, ...body] = table;
  const names = header.cells.map((c) => c.trim().toLowerCase());
  const position = new Map<SheetColumn, number>();
  for (const column of SHEET_COLUMNS) {
    const at = names.indexOf(column);
    if (at >= 0) position.set(column, at);
    else if ((QUESTION_COLUMNS as readonly string[]).includes(column) || column === 'decision') {
      throw new ErrataError('QUERY_SHEET', `the sheet has no column "${column}"`, {
        hint: `A query sheet's header is: ${SHEET_COLUMNS.join(', ')}. Keep the columns errata queries export wrote.`,
        data: unit === 'line' ? { file, line: header.row } : { file, row: header.row },
      });
    }
  }
  return body.map(({ row, cells }) => ({
    row,
    cells: Object.fromEntries(SHEET_COLUMNS.map((c) => [c, cellOf(cells, position.get(c), c)])) as Record<SheetColumn, string>,
  }));
}

// The question's key and value are compared with the data exactly; answers are trimmed, since a stray
// space typed into a spreadsheet cell is never meant.
const EXACT: ReadonlySet<SheetColumn> = new Set(['key', 'value']);

function cellOf(cells: readonly string[], at: number | undefined, column: SheetColumn): string {
  const text = at === undefined ? '' : (cells[at] ?? '');
  return EXACT.has(column) ? text : text.trim();
}
