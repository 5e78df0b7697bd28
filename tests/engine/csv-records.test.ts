import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { DuckDBInstance, type DuckDBConnection } from '@duckdb/node-api';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { scanDelimited } from '../../src/engine/csv-records.js';
import { removeDir, tempDir } from '../helpers/project.js';

/**
 * The record count of csv-records.ts, checked against an independent reader: DuckDB's own CSV reader
 * run serially (`parallel = false`), with the options the loader uses, on valid files with blank
 * lines, quoted line breaks, doubled and stray quotes, CRLF and no final line break.
 */

let dir: string;
let duck: DuckDBInstance;
let db: DuckDBConnection;

beforeAll(async () => {
  dir = tempDir();
  duck = await DuckDBInstance.create(':memory:');
  db = await duck.connect();
});

afterAll(() => {
  db.closeSync();
  duck.closeSync();
  removeDir(dir);
});

/** Rows DuckDB's serial reader returns for `file`, read as text with the loader's options. */
async function serialRows(file: string, columns: string[], delimiter: string): Promise<number> {
  const spec = columns.map((c) => `'${c}': 'VARCHAR'`).join(', ');
  const reader = await db.runAndReadAll(`SELECT count(*) AS n FROM read_csv('${file}', header = true, auto_detect = false,
    columns = {${spec}}, delim = '${delimiter}', quote = '"', escape = '"', strict_mode = true, allow_quoted_nulls = false,
    null_padding = false, max_line_size = 8388608, parallel = false)`);
  return Number(reader.getRowObjects()[0].n);
}

let fileNumber = 0;
function write(content: string | Buffer): string {
  const file = path.join(dir, `f${(fileNumber += 1)}.csv`);
  writeFileSync(file, content);
  return file;
}

describe('scanDelimited', () => {
  it.each([
    ['plain', 'id,x\n1,a\n2,b\n', ['id', 'x'], ','],
    ['no final line break', 'id,x\n1,a\n2,b', ['id', 'x'], ','],
    ['CRLF', 'id,x\r\n1,a\r\n2,b\r\n', ['id', 'x'], ','],
    ['blank lines', 'id,x\n1,a\n\n2,b\n\n', ['id', 'x'], ','],
    ['blank CRLF lines', 'id,x\r\n\r\n1,a\r\n\r\n2,b\r\n', ['id', 'x'], ','],
    ['a blank line in one column is a missing value', 'id\n1\n\n2\n', ['id'], ','],
    ['quoted line breaks', 'id,x\n1,"a\nb"\n2,"\n\n"\n', ['id', 'x'], ','],
    ['doubled quotes', 'id,x\n1,"say ""hi""\n, twice"\n2,""\n3,""""\n', ['id', 'x'], ','],
    ['a stray quote inside an unquoted field', 'id,x\n1,5" screen\n2,b\n', ['id', 'x'], ','],
    ['quoted header with a line break', '"id","x\ny"\n1,a\n', ['id', 'x\ny'], ','],
    ['tabs', 'id\tx\n1\t"a\tb"\n2\tc\n', ['id', 'x'], '\t'],
    ['a quoted last field without a final line break', 'id,x\n1,"a\nb"', ['id', 'x'], ','],
  ])('%s: as many records as the serial reader returns rows', async (_what, content, columns, delimiter) => {
    const file = write(content);
    const scan = await scanDelimited(file, delimiter, columns.length);
    expect(scan.records - 1).toBe(await serialRows(file, columns, delimiter));
    expect(scan.holdsNulByte).toBe(false);
  });

  it('quotes and line breaks on either side of the 4 MiB block boundary are read as one file would be', async () => {
    // A quoted field holding a doubled quote and a line break, moved byte by byte across the boundary.
    for (let shift = 0; shift < 8; shift += 1) {
      const filler = Array.from({ length: 200_000 }, (_, i) => `${i},v${i}`).join('\n');
      const pad = (4 << 20) - `id,x\n${filler}\n`.length - 6 + shift;
      const content = `id,x\n${filler}\n${'9'.repeat(pad)},"a""\nb"\n1,"""\n"\nlast,x\n`;
      const file = write(content);
      const scan = await scanDelimited(file, ',', 2);
      // 200,000 filler rows, the padded row, the row with a doubled quote, last.
      expect(scan.records - 1, `shift ${shift}`).toBe(200_003);
      expect(scan.records - 1, `shift ${shift}`).toBe(await serialRows(file, ['id', 'x'], ','));
    }
  });

  it('finds a NUL byte anywhere', async () => {
    const file = write(Buffer.concat([Buffer.from('id,x\n1,a\n'), Buffer.alloc(5 << 20, 0x61), Buffer.from('\n2,b\u0000c\n')]));
    expect((await scanDelimited(file, ',', 2)).holdsNulByte).toBe(true);
  });
});
