import { createHash } from 'node:crypto';
import { readdirSync, readFileSync, statSync } from 'node:fs';
import path from 'node:path';
import { DuckDBInstance, type DuckDBConnection } from '@duckdb/node-api';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildProject } from '../../src/build/build-project.js';
import { ErrataError } from '../../src/errors.js';
import { WorkingTree } from '../../src/git/tree.js';
import { errata, makeProject, removeDir, tempDir, writeFiles } from '../helpers/project.js';

/**
 * Loading raw deliveries: each test writes a delivery into a temporary project (one table `t`) and
 * loads it the way a build does, then reads the loaded table back.
 */

const CONFIG = 'tables:\n  t:\n    raw: raw/t/\n    key: id\n';
const roots: string[] = [];

let duck: DuckDBInstance;
let db: DuckDBConnection;

beforeAll(async () => {
  duck = await DuckDBInstance.create(':memory:');
  db = await duck.connect();
});

afterAll(() => {
  db.closeSync();
  duck.closeSync();
  roots.forEach(removeDir);
});

function project(files: Record<string, string | Buffer>): string {
  const root = tempDir();
  roots.push(root);
  writeFiles(root, { 'errata.yaml': CONFIG, ...files });
  return root;
}

type Row = Record<string, unknown>;

/** Build the project in-process and return the clean table's rows (ordered by id) and column types. */
async function load(root: string): Promise<{ rows: Row[]; types: Record<string, string> }> {
  const build = await buildProject({ tree: new WorkingTree(root), workDir: path.join(root, '.errata', 'tmp') });
  try {
    const table = build.tables[0];
    const rows = await build.session.all(`SELECT * FROM "${table.cleanTable}" ORDER BY id`);
    const types = Object.fromEntries(table.columns.map((c) => [c.name, c.type]));
    return { rows: rows.map((r) => Object.fromEntries(Object.entries(r).map(([k, v]) => [k, typeof v === 'bigint' ? Number(v) : v]))), types };
  } finally {
    build.session.close();
  }
}

async function loadError(root: string): Promise<ErrataError> {
  const error = await load(root).then(
    () => null,
    (e: unknown) => e,
  );
  expect(error, 'expected the delivery to be refused').toBeInstanceOf(ErrataError);
  return error as ErrataError;
}

function sqlString(text: string): string {
  return `'${text.replaceAll("'", "''")}'`;
}

describe('delimited files', () => {
  it('reads a CSV with quoted delimiters, doubled quotes and a quoted line break', async () => {
    const root = project({
      'raw/t/delivery.csv': 'id,name,remark\n1,"Ash, Robin","said ""fine"""\n2,Lee,"two\nlines"\n3,Moss,\n',
    });
    const { rows } = await load(root);
    expect(rows).toEqual([
      { id: 1, name: 'Ash, Robin', remark: 'said "fine"' },
      { id: 2, name: 'Lee', remark: 'two\nlines' },
      { id: 3, name: 'Moss', remark: null },
    ]);
  });

  it('reads a CSV with a UTF-8 byte order mark and CRLF line ends, the mark not becoming part of the first name', async () => {
    const bom = Buffer.from([0xef, 0xbb, 0xbf]);
    const root = project({ 'raw/t/delivery.csv': Buffer.concat([bom, Buffer.from('id,city\r\n1,Zürich\r\n2,"Saint-Étienne"\r\n')]) });
    const { rows, types } = await load(root);
    expect(Object.keys(types)).toEqual(['id', 'city']);
    expect(rows).toEqual([
      { id: 1, city: 'Zürich' },
      { id: 2, city: 'Saint-Étienne' },
    ]);
  });

  it('reads a TSV whose quoted fields hold tabs and commas', async () => {
    const root = project({ 'raw/t/delivery.tsv': 'id\tname\tnote\n1\t"Ash, Robin"\t"a\ttab"\n2\tLee\tplain\n' });
    const { rows } = await load(root);
    expect(rows).toEqual([
      { id: 1, name: 'Ash, Robin', note: 'a\ttab' },
      { id: 2, name: 'Lee', note: 'plain' },
    ]);
  });

  it('tells a missing value (empty field) from the empty text (quoted "")', async () => {
    const root = project({ 'raw/t/delivery.csv': 'id,note\n1,\n2,""\n' });
    const { rows } = await load(root);
    expect(rows).toEqual([
      { id: 1, note: null },
      { id: 2, note: '' },
    ]);
  });
});

describe('Parquet and JSON lines', () => {
  it('reads a Parquet file written by plain DuckDB, keeping its declared types', async () => {
    const root = project({});
    writeFiles(root, { 'raw/t/.keep': '' });
    const file = path.join(root, 'raw', 't', 'delivery.parquet');
    await db.run(`COPY (SELECT * FROM (VALUES (1, 'Ash', 71.25::DOUBLE, DATE '2024-03-01'), (2, NULL, 64.5, NULL)) AS v(id, name, weight, seen))
      TO ${sqlString(file)} (FORMAT parquet)`);
    const { rows, types } = await load(root);
    expect(types).toEqual({ id: 'INTEGER', name: 'VARCHAR', weight: 'DOUBLE', seen: 'DATE' });
    expect(rows.map((r) => [r.id, r.name, r.weight])).toEqual([
      [1, 'Ash', 71.25],
      [2, null, 64.5],
    ]);
    expect(rows[1].seen).toBeNull();
  });

  it('reads JSON lines written by plain DuckDB, every key of every line becoming a column', async () => {
    const root = project({});
    writeFiles(root, { 'raw/t/.keep': '' });
    const file = path.join(root, 'raw', 't', 'delivery.jsonl');
    await db.run(`COPY (SELECT * FROM (VALUES (1, 'Ash', '007'), (2, NULL, '012')) AS v(id, name, code))
      TO ${sqlString(file)} (FORMAT json)`);
    // A later line with a key the others lack.
    writeFiles(root, { 'raw/t/delivery.jsonl': readFileSync(file, 'utf8') + '{"id":3,"name":"Moss","code":"100","extra":true}\n' });
    const { rows, types } = await load(root);
    expect(Object.keys(types)).toEqual(['id', 'name', 'code', 'extra']);
    expect(rows).toEqual([
      { id: 1, name: 'Ash', code: '007', extra: null },
      { id: 2, name: null, code: '012', extra: null },
      { id: 3, name: 'Moss', code: '100', extra: true },
    ]);
  });

  it('refuses a JSON line that is not an object, naming its line', async () => {
    const root = project({ 'raw/t/delivery.jsonl': '{"id": 1}\n[1, 2]\n{"id": 3}\n' });
    const error = await loadError(root);
    expect(error.code).toBe('INPUT_FORMAT');
    expect(error.data).toMatchObject({ file: 'raw/t/delivery.jsonl', line: 2 });
  });

  it('refuses a JSON line left open, naming that line rather than the next one, where the reader gave up', async () => {
    // Line 2 lacks its closing brace; DuckDB's reader carries on into line 3 and names line 3.
    const root = project({ 'raw/t/delivery.jsonl': '{"id": 1}\n{"id": 2, "x": "b"\n{"id": 3}\n' });
    const error = await loadError(root);
    expect(error.code).toBe('INPUT_FORMAT');
    expect(error.data).toMatchObject({ file: 'raw/t/delivery.jsonl', line: 2 });
    expect(error.message).toMatch(/line 2 is not one whole JSON value/);
  });

  it('names a non-object\'s line of the file, not its place among the values, when blank lines come first', async () => {
    // Line 2 is blank (the reader skips it), so the array is the second value but on line 3.
    const root = project({ 'raw/t/delivery.jsonl': '{"id": 1}\n\n[1, 2]\n{"id": 3}\n' });
    const error = await loadError(root);
    expect(error.code).toBe('INPUT_FORMAT');
    expect(error.data).toMatchObject({ file: 'raw/t/delivery.jsonl', line: 3 });
  });

  it('names the line of a NUL written as an escape, blank lines counted', async () => {
    const root = project({ 'raw/t/delivery.jsonl': '{"id": 1, "x": "a"}\n\n\n{"id": 2, "x": "b\\u0000c"}\n' });
    const error = await loadError(root);
    expect(error.message).toMatch(/NUL byte in column "x"/);
    expect(error.data).toMatchObject({ file: 'raw/t/delivery.jsonl', line: 4 });
  });

  it('names the last line when it is the one left open, blank lines counted', async () => {
    const root = project({ 'raw/t/delivery.jsonl': '{"id": 1}\n\n{"id": 2}\n{"id": 3\n' });
    const error = await loadError(root);
    expect(error.data).toMatchObject({ file: 'raw/t/delivery.jsonl', line: 4 });
  });
});

describe('malformed deliveries are refused with a code and the line to look at', () => {
  // DuckDB numbers lines by records and blank lines, so after a line break inside quotes its line
  // is behind the file's; each case below is counted by hand in its comment.
  it.each([
    // header 1, the quoted value on lines 2-3, line 4 fine, line 5 has three fields
    ['a ragged row', 'id,x\n1,"a\nb"\n2,c\n3,d,e\n', 5, /3 fields where the header has 2/],
    // header 1, the quoted value on lines 2-3, line 4 opens a quote never closed
    ['an unclosed quote', 'id,x\n1,"a\nb"\n2,"c\n3,d\n', 4, /never closed/],
    // header 1, the quoted value on lines 2-4, line 5 holds the NUL
    ['a NUL byte', 'id,x\n1,"a\nb\nc"\n2,b\u0000c\n', 5, /NUL byte in column "x"/],
    // header 1, the quoted value on lines 2-3, line 4 ends with CRLF
    ['mixed line endings', 'id,x\n1,"a\nb"\n2,c\r\n', 4, /mixed line endings/],
    // header 1, lines 2 and 4-5 hold records, 3 is blank, line 6 has three fields
    ['a ragged row after a blank line', 'id,x\n1,a\n\n2,"b\nc"\n3,d,e\n', 6, /3 fields where the header has 2/],
  ])('%s after a line break inside quotes is named by the file\'s own line number', async (_what, content, line, message) => {
    const error = await loadError(project({ 'raw/t/d.csv': content }));
    expect(error.code).toBe('CSV_MALFORMED');
    expect(error.message).toMatch(message);
    expect(error.data).toMatchObject({ file: 'raw/t/d.csv', line });
  });

  it('a ragged row (too few fields) is CSV_MALFORMED at its line', async () => {
    const error = await loadError(project({ 'raw/t/d.csv': 'id,a,b\n1,x,y\n2,x\n3,x,y\n' }));
    expect(error.code).toBe('CSV_MALFORMED');
    expect(error.data).toMatchObject({ file: 'raw/t/d.csv', line: 3 });
    expect(error.message).toMatch(/2 fields where the header has 3/);
  });

  it('a ragged row (too many fields) is CSV_MALFORMED at its line', async () => {
    const error = await loadError(project({ 'raw/t/d.csv': 'id,a,b\n1,x,y\n2,x,y\n3,x,y,z\n' }));
    expect(error.code).toBe('CSV_MALFORMED');
    expect(error.data).toMatchObject({ file: 'raw/t/d.csv', line: 4 });
  });

  it('an unterminated quote is CSV_MALFORMED at the line it opens on', async () => {
    const error = await loadError(project({ 'raw/t/d.csv': 'id,a\n1,x\n2,y\n3,"never closed\n' }));
    expect(error.code).toBe('CSV_MALFORMED');
    expect(error.data).toMatchObject({ file: 'raw/t/d.csv', line: 4 });
    expect(error.message).toMatch(/quoted field/);
  });

  it('a header naming one column twice is CSV_HEADER on line 1', async () => {
    const error = await loadError(project({ 'raw/t/d.csv': 'id,weight,weight\n1,70.5,71\n' }));
    expect(error.code).toBe('CSV_HEADER');
    expect(error.data).toMatchObject({ file: 'raw/t/d.csv', line: 1 });
    expect(error.message).toContain('"weight"');
  });

  it('a header with an empty name is CSV_HEADER on line 1, naming the column position', async () => {
    const error = await loadError(project({ 'raw/t/d.csv': 'id,,weight\n1,x,70.5\n' }));
    expect(error.code).toBe('CSV_HEADER');
    expect(error.data).toMatchObject({ file: 'raw/t/d.csv', line: 1 });
    expect(error.message).toMatch(/column 2/);
  });

  it('a row without a key value is KEY_MISSING at its line', async () => {
    // Header on line 1, data rows on lines 2-4: the keyless row is data row 2, line 3.
    const error = await loadError(project({ 'raw/t/d.csv': 'id,a\n1,x\n,y\n3,z\n' }));
    expect(error.code).toBe('KEY_MISSING');
    expect(error.data.file).toBe('raw/t/d.csv');
    expect(error.data.line).toBe(3);
  });

  it('a duplicated key is KEY_DUPLICATE listing the repeated keys, at the line of the first repeat', async () => {
    // Lines: 1 header, 2 id 1, 3 id 2, 4 id 1 again (first repeat), 5 id 2 again, 6 id 3.
    const error = await loadError(project({ 'raw/t/d.csv': 'id,a\n1,x\n2,y\n1,z\n2,w\n3,q\n' }));
    expect(error.code).toBe('KEY_DUPLICATE');
    expect(error.data.examples).toEqual(['1', '2']);
    expect(error.message).toMatch(/1 \(2 rows/);
    expect(error.message).toMatch(/2 \(2 rows/);
    expect(error.data.line).toBe(4);
  });

  it('key problems after a line break inside quotes and a blank line are named by the file\'s own lines', async () => {
    // Lines: 1 header, 2-3 data row 1 (a quoted value over two lines), 4 data row 2, 5 blank,
    // 6 data row 3 repeating id 1.
    const repeat = await loadError(project({ 'raw/t/d.csv': 'id,a\n1,"x\ny"\n2,z\n\n1,w\n' }));
    expect(repeat.code).toBe('KEY_DUPLICATE');
    expect(repeat.message).toMatch(/1 \(2 rows: data rows 1, 3\)/);
    expect(repeat.data.line).toBe(6);
    // The same lines with id 5 on line 6, then line 7: data row 4 without an id.
    const missing = await loadError(project({ 'raw/t/d.csv': 'id,a\n1,"x\ny"\n2,z\n\n5,w\n,v\n' }));
    expect(missing.code).toBe('KEY_MISSING');
    expect(missing.data.line).toBe(7);
  });

  it('a repeated key and a missing key far into a long delivery are named by their lines in the file', async () => {
    // Long enough (about 80 MB) that DuckDB reads it in parallel pieces and, left free to, stores rows
    // out of file order; the lines named must still be the file's. Data row r holds id r and sits on
    // line r + 1. Row 1,000,000 repeats id 7 (so line 1,000,001); row 900,000 has no id (line 900,001).
    const rows = 1_000_000;
    const filler = 'x'.repeat(70);
    const lines = ['id,a'];
    for (let r = 1; r <= rows; r += 1) lines.push(`${r === rows ? 7 : r},${filler}`);
    const duplicated = lines.join('\n') + '\n';
    const repeat = await loadError(project({ 'raw/t/d.csv': duplicated }));
    expect(repeat.code).toBe('KEY_DUPLICATE');
    expect(repeat.message).toMatch(/7 \(2 rows: data rows 7, 1000000\)/);
    expect(repeat.data.line).toBe(1_000_001);
    lines[900_000] = `,${filler}`;
    const missing = await loadError(project({ 'raw/t/d.csv': lines.join('\n') + '\n' }));
    expect(missing.code).toBe('KEY_MISSING');
    expect(missing.data.line).toBe(900_001);
  }, 60_000);

  it('a delivery without the key column is KEY_COLUMN_MISSING at the header line, listing the columns it has', async () => {
    const error = await loadError(project({ 'raw/t/d.csv': 'ident,a\n1,x\n' }));
    expect(error.code).toBe('KEY_COLUMN_MISSING');
    expect(error.data.column).toBe('id');
    expect(error.hint).toContain('ident');
    expect(error.data.line).toBe(1);
  });

  it('Latin-1 bytes in a data row are ENCODING at that line', async () => {
    // "José" with é as the single Latin-1 byte 0xE9, which is not valid UTF-8.
    const content = Buffer.concat([Buffer.from('id,name\n1,Ann\n2,Jos'), Buffer.from([0xe9]), Buffer.from('\n3,Lee\n')]);
    const error = await loadError(project({ 'raw/t/d.csv': content }));
    expect(error.code).toBe('ENCODING');
    expect(error.data).toMatchObject({ file: 'raw/t/d.csv', line: 3 });
  });

  it('Latin-1 bytes in the header are ENCODING on line 1', async () => {
    const content = Buffer.concat([Buffer.from('id,caf'), Buffer.from([0xe9]), Buffer.from('\n1,x\n')]);
    const error = await loadError(project({ 'raw/t/d.csv': content }));
    expect(error.code).toBe('ENCODING');
    expect(error.data).toMatchObject({ file: 'raw/t/d.csv', line: 1 });
  });

  it('an empty file is CSV_HEADER on line 1', async () => {
    const error = await loadError(project({ 'raw/t/d.csv': '' }));
    expect(error.code).toBe('CSV_HEADER');
    expect(error.data).toMatchObject({ file: 'raw/t/d.csv', line: 1 });
    expect(error.message).toMatch(/empty/);
  });
});

/** sha256 over every file under `dir`: its relative path and its bytes, in sorted order. */
function hashTree(dir: string): string {
  const hash = createHash('sha256');
  const visit = (rel: string) => {
    const full = path.join(dir, rel);
    if (statSync(full).isDirectory()) {
      for (const name of readdirSync(full).sort()) visit(rel ? `${rel}/${name}` : name);
      return;
    }
    hash.update(`${rel}\0`).update(readFileSync(full)).update('\0');
  };
  visit('');
  return hash.digest('hex');
}

describe('raw files are only ever read', () => {
  it('a build that corrects, renames, drops and deletes leaves every byte under raw/ as it was', async () => {
    const root = await makeProject(
      {
        'errata.yaml': CONFIG,
        'raw/t/2024-01.csv': 'id,site,height,legacy\n1,N,60.5,a\n2,S,170.2,b\n3,N,65.5,c\n',
        'corrections/t/0001-tidy.yaml': [
          'reason: Tidy the table',
          'steps:',
          '  - set: { height: "round(height * 2.54, 1)" }',
          '    where: height < 90',
          '  - rename: { site: centre }',
          '  - drop: legacy',
          '  - delete: { where: "id = 2", reason: withdrew consent }',
          '',
        ].join('\n'),
      },
      { commit: false },
    );
    roots.push(root);
    const before = hashTree(path.join(root, 'raw'));
    const result = await errata(root, ['build']);
    expect(result.code, result.stderr).toBe(0);
    expect(hashTree(path.join(root, 'raw'))).toBe(before);
    // The build did write its outputs, so the check above is not vacuous.
    expect(readFileSync(path.join(root, 'clean', 't.csv'), 'utf8')).toBe('id,centre,height\n1,N,153.7\n3,N,166.4\n');
  });
});
