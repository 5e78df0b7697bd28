import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { afterAll, describe, expect, it } from 'vitest';
import { createRandom } from '../../src/demo/random.js';
import { diffFiles } from '../../src/diff/file-diff.js';
import type { MultisetDiff, TableDiff } from '../../src/diff/types.js';
import { errata, removeDir, tempDir } from '../helpers/project.js';

/** The demo's seeded generator (mulberry32), so every run of this test sees the same tables. */
function random(seed: number): () => number {
  const source = createRandom(seed);
  return () => source.next();
}

type Row = Record<string, string | null>;

const WORDS = ['alpha', 'Ærøskøbing', 'naïve café', '東京', 'emoji 🙂', 'comma, inside', 'quote "q"', 'line', ''];

function csv(columns: string[], rows: Row[]): string {
  const field = (v: string | null) => (v === null ? '' : v === '' || /[",\n]/.test(v) ? `"${v.replaceAll('"', '""')}"` : v);
  return [columns.join(','), ...rows.map((r) => columns.map((c) => field(r[c])).join(','))].join('\n') + '\n';
}

/**
 * A random old/new pair: rows removed and added, new rows shuffled, a column dropped and one added,
 * and cell edits of every awkward kind: to and from missing, to the empty string, unicode, a number
 * changed only in its last digit.
 */
function tablePair(seed: number) {
  const rand = random(seed);
  const pick = <T>(list: T[]) => list[Math.floor(rand() * list.length)];
  const decimal = () => (Math.floor(rand() * 1_000_000) / 1000 + 0.001).toFixed(3);
  const oldColumns = ['id', 'label', 'amount', 'count', 'code', 'gone'];
  const newColumns = ['id', 'label', 'amount', 'count', 'code', 'fresh'];
  const n = 200 + Math.floor(rand() * 300);
  const oldRows: Row[] = [];
  for (let i = 0; i < n; i += 1) {
    oldRows.push({
      id: String(1000 + i * 3),
      label: rand() < 0.1 ? null : pick(WORDS),
      amount: rand() < 0.1 ? null : decimal(),
      count: rand() < 0.1 ? null : String(Math.floor(rand() * 100)),
      code: pick(['001', '002', '010', '099']),
      gone: pick(['x', 'y']),
    });
  }
  const newRows: Row[] = [];
  for (const row of oldRows) {
    if (rand() < 0.05) continue;
    const copy: Row = { ...row, fresh: pick(['p', 'q']) };
    delete copy.gone;
    if (rand() < 0.15) {
      const column = pick(['label', 'amount', 'count', 'code']);
      const r = rand();
      if (r < 0.2) copy[column] = null;
      else if (column === 'label') copy.label = r < 0.4 ? '' : `${pick(WORDS)}!`;
      else if (column === 'amount') copy.amount = copy.amount === null ? decimal() : (Number(copy.amount) + 0.001).toFixed(3);
      else if (column === 'count') copy.count = String(Number(copy.count ?? '0') + 1);
      else copy.code = copy.code === '001' ? '002' : '001';
    }
    newRows.push(copy);
  }
  for (let i = 0; i < Math.floor(n * 0.05); i += 1) {
    newRows.push({ id: String(5_000_000 + i), label: pick(WORDS), amount: decimal(), count: '7', code: '010', fresh: 'p' });
  }
  for (let i = newRows.length - 1; i > 0; i -= 1) {
    const j = Math.floor(rand() * (i + 1));
    [newRows[i], newRows[j]] = [newRows[j], newRows[i]];
  }
  return { oldCsv: csv(oldColumns, oldRows), newCsv: csv(newColumns, newRows) };
}

/**
 * The oracle: plain SQL written here, independent of errata's diff. Keys by EXCEPT, changed cells by
 * EXCEPT of (key, value) pairs per column (EXCEPT compares NULLs as equal, so it is null-safe).
 */
async function oracle(oldFile: string, newFile: string) {
  const db = await DuckDBInstance.create(':memory:');
  const c = await db.connect();
  const q = async (sql: string) => (await c.runAndReadAll(sql)).getRowObjectsJS();
  const read = (f: string) => `read_csv('${f}', header = true, all_varchar = true, allow_quoted_nulls = false)`;
  await c.run(`CREATE TABLE o AS SELECT * FROM ${read(oldFile)}`);
  await c.run(`CREATE TABLE n AS SELECT * FROM ${read(newFile)}`);
  const count = async (sql: string) => Number((await q(`SELECT count(*) AS k FROM (${sql})`))[0].k);
  const added = await count('SELECT id FROM n EXCEPT SELECT id FROM o');
  const removed = await count('SELECT id FROM o EXCEPT SELECT id FROM n');
  const both = await count('SELECT id FROM n INTERSECT SELECT id FROM o');
  const cells: Array<{ key: string; column: string; old: string | null; new: string | null }> = [];
  for (const column of ['label', 'amount', 'count', 'code']) {
    const rows = await q(`
      WITH changed AS (
        SELECT id, "${column}" AS v FROM n WHERE id IN (SELECT id FROM o)
        EXCEPT
        SELECT id, "${column}" FROM o)
      SELECT changed.id AS key, o."${column}" AS old, changed.v AS new
      FROM changed JOIN o ON o.id = changed.id`);
    for (const r of rows) cells.push({ key: r.key as string, column, old: r.old as string | null, new: r.new as string | null });
  }
  db.closeSync();
  const changedRows = new Set(cells.map((x) => x.key)).size;
  return { added, removed, changed: changedRows, unchanged: both - changedRows, cells };
}

const sortCells = <T extends { key: string; column: string }>(cells: T[]) =>
  [...cells].sort((a, b) => (a.key === b.key ? (a.column < b.column ? -1 : 1) : Number(a.key) - Number(b.key)));

describe('keyed diff against an independent SQL oracle', () => {
  const dir = tempDir();
  afterAll(() => removeDir(dir));

  it.each([1, 2, 3, 4, 5, 6])('agrees with the oracle on random table pair %i', async (seed) => {
    const { oldCsv, newCsv } = tablePair(seed);
    const oldFile = path.join(dir, `old-${seed}.csv`);
    const newFile = path.join(dir, `new-${seed}.csv`);
    writeFileSync(oldFile, oldCsv);
    writeFileSync(newFile, newCsv);
    const expected = await oracle(oldFile, newFile);
    const diff = (await diffFiles(oldFile, newFile, { key: ['id'] })) as TableDiff;
    expect(diff.summary.rows).toEqual({ added: expected.added, removed: expected.removed, changed: expected.changed, unchanged: expected.unchanged });
    expect(diff.summary.cells.changed).toBe(expected.cells.length);
    expect(diff.summary.columns).toEqual({ added: ['fresh'], removed: ['gone'], retyped: [] });
    expect(sortCells(diff.cells)).toEqual(sortCells(expected.cells));
    expect(expected.cells.length).toBeGreaterThan(5);
  });

  it('decides each side\'s column types over the whole column, whichever rows were added, removed or changed', async () => {
    // Each side's type by the rule errata documents (every non-missing value an integer, else every
    // one a number, else text), worked out here by plain SQL over each file alone. A cell is changed
    // when its texts differ, unless both sides are numeric and the values are equal (1.0 and 1).
    const integer = '-?(0|[1-9][0-9]*)';
    const number = '-?(0|[1-9][0-9]*)(\\.[0-9]+)?([eE][-+]?[0-9]+)?';
    const columns = ['a', 'b', 'c'];
    let flips = 0;
    for (let seed = 11; seed <= 30; seed += 1) {
      const rand = random(seed);
      // Odd values (text, halves) are rare, so that adding, removing or changing one row can move a
      // whole column from one type to another; added rows carry more of them.
      const value = (odd = 0.002): string | null => {
        const r = rand();
        if (r < odd) return 'n/a';
        if (r < odd + 0.01) return null;
        if (r < 2 * odd + 0.01) return `${Math.floor(rand() * 50)}.5`;
        return String(Math.floor(rand() * 50));
      };
      const oldRows: Row[] = [];
      for (let i = 0; i < 150; i += 1) oldRows.push({ id: String(i), a: value(), b: value(), c: value() });
      // Row 0 holds the only text in c, unless some other row has one; it is removed half the time.
      oldRows[0].c = 'n/a';
      const newRows: Row[] = [];
      for (const row of oldRows) {
        if (rand() < (row.id === '0' ? 0.5 : 0.1)) continue;
        const copy = { ...row };
        for (const c of columns) {
          const r = rand();
          if (r < 0.05) copy[c] = value(0.1);
          else if (r < 0.08 && copy[c] !== null && /^[0-9]+$/.test(copy[c]!)) copy[c] = `${copy[c]}.0`;
        }
        newRows.push(copy);
      }
      for (let i = 0; i < 10; i += 1) newRows.push({ id: String(1000 + i), a: value(0.03), b: value(0.03), c: value(0.03) });
      const oldFile = path.join(dir, `types-old-${seed}.csv`);
      const newFile = path.join(dir, `types-new-${seed}.csv`);
      writeFileSync(oldFile, csv(['id', ...columns], oldRows));
      writeFileSync(newFile, csv(['id', ...columns], newRows));

      const db = await DuckDBInstance.create(':memory:');
      const conn = await db.connect();
      const typeOf = async (file: string, column: string) => {
        const [row] = (
          await conn.runAndReadAll(`SELECT bool_and(regexp_full_match("${column}", '${integer}')) AS i, bool_and(regexp_full_match("${column}", '${number}')) AS n
            FROM read_csv('${file}', header = true, all_varchar = true, allow_quoted_nulls = false) WHERE "${column}" IS NOT NULL`)
        ).getRowObjectsJS();
        return row.i ? 'integer' : row.n ? 'number' : 'string';
      };
      const types: Record<string, { old: string; new: string }> = {};
      for (const c of columns) types[c] = { old: await typeOf(oldFile, c), new: await typeOf(newFile, c) };
      db.closeSync();
      const numeric = (t: string) => t === 'integer' || t === 'number';
      const expectedCells: Array<{ key: string; column: string; old: string | null; new: string | null }> = [];
      const oldById = new Map(oldRows.map((r) => [r.id!, r]));
      for (const row of newRows) {
        const before = oldById.get(row.id!);
        if (!before) continue;
        for (const c of columns) {
          const [o, n] = [before[c], row[c]];
          if (o === n) continue;
          if (o !== null && n !== null && numeric(types[c].old) && numeric(types[c].new) && Number(o) === Number(n)) continue;
          expectedCells.push({ key: row.id!, column: c, old: o, new: n });
        }
      }
      const retyped = columns.filter((c) => types[c].old !== types[c].new).map((c) => ({ column: c, from: types[c].old, to: types[c].new }));
      flips += retyped.length;

      const diff = (await diffFiles(oldFile, newFile, { key: ['id'] })) as TableDiff;
      expect(diff.retyped, `seed ${seed}`).toEqual(retyped);
      expect(sortCells(diff.cells), `seed ${seed}`).toEqual(sortCells(expectedCells));
    }
    // The pairs must really move columns between types, or this test checks nothing.
    expect(flips).toBeGreaterThanOrEqual(3);
  });

  it('counts numbers within --tolerance as equal and others as changed', async () => {
    const oldFile = path.join(dir, 'tol-old.csv');
    const newFile = path.join(dir, 'tol-new.csv');
    writeFileSync(oldFile, 'id,x\n1,1.000\n2,2.5\n3,\n4,7.25\n');
    writeFileSync(newFile, 'id,x\n1,1.004\n2,2.6\n3,0.5\n4,7.25\n');
    // By hand: |1.004 - 1.000| = 0.004 ≤ 0.01 (equal); |2.6 - 2.5| = 0.1 > 0.01; missing → 0.5 is a change.
    const diff = (await diffFiles(oldFile, newFile, { key: ['id'], tolerance: 0.01 })) as TableDiff;
    expect(diff.cells.map((c) => c.key)).toEqual(['2', '3']);
    const exact = (await diffFiles(oldFile, newFile, { key: ['id'] })) as TableDiff;
    expect(exact.cells.map((c) => c.key)).toEqual(['1', '2', '3']);
  });

  it('reports a retyped column and a likely rename', async () => {
    const oldFile = path.join(dir, 'schema-old.csv');
    const newFile = path.join(dir, 'schema-new.csv');
    writeFileSync(oldFile, 'id,visits,site\n1,3,A\n2,4,B\n');
    writeFileSync(newFile, 'id,visits,centre\n1,three,A\n2,4,B\n');
    const diff = (await diffFiles(oldFile, newFile, { key: ['id'] })) as TableDiff;
    expect(diff.retyped).toEqual([{ column: 'visits', from: 'integer', to: 'string' }]);
    expect(diff.renamed).toEqual([{ from: 'site', to: 'centre' }]);
    expect(diff.cells).toEqual([{ key: '1', column: 'visits', old: '3', new: 'three' }]);
  });

  it('refuses duplicate keys and shows examples', async () => {
    const oldFile = path.join(dir, 'dup-old.csv');
    writeFileSync(oldFile, 'id,x\n1,a\n2,b\n1,c\n');
    await expect(diffFiles(oldFile, oldFile, { key: ['id'] })).rejects.toMatchObject({ code: 'KEY_DUPLICATE', message: expect.stringContaining('1 (2 rows') });
  });

  it('names a repeated key far into a long file by its data rows in the file', async () => {
    // About 80 MB, so DuckDB reads it in parallel pieces and may store rows out of order; data row r
    // holds id r except the last, which repeats id 7.
    const rows = 1_000_000;
    const lines = ['id,a'];
    for (let r = 1; r <= rows; r += 1) lines.push(`${r === rows ? 7 : r},${'y'.repeat(70)}`);
    const file = path.join(dir, 'long-dup.csv');
    writeFileSync(file, lines.join('\n') + '\n');
    await expect(diffFiles(file, file, { key: ['id'] })).rejects.toMatchObject({
      code: 'KEY_DUPLICATE',
      message: expect.stringContaining('7 (2 rows: data rows 7, 1000000)'),
      data: expect.objectContaining({ line: 1_000_001 }),
    });
  }, 60_000);
});

describe('diff without a key', () => {
  it('compares rows as multisets with counts, matching an EXCEPT ALL oracle', async () => {
    const dir = tempDir();
    try {
      const oldFile = path.join(dir, 'a.csv');
      const newFile = path.join(dir, 'b.csv');
      writeFileSync(oldFile, 'x,y\n1,a\n1,a\n1,a\n2,b\n3,\n');
      writeFileSync(newFile, 'x,y\n1,a\n2,b\n2,b\n4,d\n3,\n');
      // By hand: old has (1,a)×3, new ×1 → 2 only in old; (2,b) new ×2 vs 1 → 1 only in new; (4,d) only in new.
      const diff = (await diffFiles(oldFile, newFile, {})) as MultisetDiff;
      expect(diff.rows).toEqual({ old: 5, new: 5, onlyOld: 2, onlyNew: 2, common: 3 });
      expect(diff.onlyOld).toEqual([{ values: { x: '1', y: 'a' }, count: 2 }]);
      expect(diff.onlyNew).toEqual([
        { values: { x: '2', y: 'b' }, count: 1 },
        { values: { x: '4', y: 'd' }, count: 1 },
      ]);
      // Cross-check the totals with DuckDB's EXCEPT ALL (multiset difference).
      const db = await DuckDBInstance.create(':memory:');
      const c = await db.connect();
      const n = async (a: string, b: string) =>
        Number((await c.runAndReadAll(`SELECT count(*) AS k FROM (SELECT * FROM read_csv('${a}', all_varchar = true) EXCEPT ALL SELECT * FROM read_csv('${b}', all_varchar = true))`)).getRowObjectsJS()[0].k);
      expect(diff.rows.onlyOld).toBe(await n(oldFile, newFile));
      expect(diff.rows.onlyNew).toBe(await n(newFile, oldFile));
      db.closeSync();
    } finally {
      removeDir(dir);
    }
  });
});

describe('diff --files on the command line', () => {
  it('prints exactly the documented summary object and honours --exit-code', async () => {
    const dir = tempDir();
    try {
      writeFileSync(path.join(dir, 'a.csv'), 'id,x,gone\n1,a,z\n2,b,z\n3,c,z\n');
      writeFileSync(path.join(dir, 'b.csv'), 'id,x,new\n1,a,q\n2,B,q\n4,d,q\n');
      const result = await errata(dir, ['diff', '--files', 'a.csv', 'b.csv', '--key', 'id', '--format', 'json', '--summary', '--exit-code']);
      expect(result.code).toBe(1);
      // By hand: id 2 changed (x b→B), id 4 added, id 3 removed, id 1 unchanged.
      expect(result.stdout).toBe('{"rows":{"added":1,"removed":1,"changed":1,"unchanged":1},"cells":{"changed":1},"columns":{"added":["new"],"removed":["gone"],"retyped":[]}}\n');
      const same = await errata(dir, ['diff', '--files', 'a.csv', 'a.csv', '--key', 'id', '--exit-code']);
      expect(same.code).toBe(0);
      const markdown = await errata(dir, ['diff', '--files', 'a.csv', 'b.csv', '--key', 'id', '--format', 'markdown', '--limit', '0']);
      expect(markdown.stdout).toContain('…and 1 more changed cell.');
      const html = await errata(dir, ['diff', '--files', 'a.csv', 'b.csv', '--key', 'id', '--format', 'html']);
      expect(html.stdout).toMatch(/^<!doctype html>/);
      expect(html.stdout).not.toMatch(/<script|https?:\/\//);
    } finally {
      removeDir(dir);
    }
  });
});
