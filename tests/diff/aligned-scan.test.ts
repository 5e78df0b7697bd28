import { readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { DuckDBInstance, LIST, VARCHAR, listValue } from '@duckdb/node-api';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { scanAligned, type AlignedScanOptions } from '../../src/diff/aligned-scan.js';
import { createRandom } from '../../src/demo/random.js';
import { diffFiles, type FileDiffProgress } from '../../src/diff/file-diff.js';
import type { TableDiff } from '../../src/diff/types.js';
import { fitsTypeSql, type ValueType } from '../../src/engine/column-types.js';
import { FITS_BOOLEAN, FITS_DATE, FITS_INTEGER, FITS_NUMBER, UNSURE, textFits } from '../../src/engine/text-fits.js';
import { removeDir, tempDir } from '../helpers/project.js';

/** The demo's seeded generator (mulberry32), so every run of this test sees the same tables. */
function random(seed: number): () => number {
  const source = createRandom(seed);
  return () => source.next();
}

describe('type fits of raw bytes', () => {
  // Awkward texts for each rule. The calendar ones follow the Gregorian leap-year rule (divisible by
  // 4, except centuries not divisible by 400: 1900 is not a leap year, 2000 is), common practice.
  const values = [
    '0', '-0', '00', '007', '12', '-12', '123456789012345678', '1234567890123456789', '-999999999999999999',
    '1.5', '1.50', '-0.5', '0.0', '.5', '5.', '1e3', '1E+3', '1e-3', '2.5e-7', '1e', 'e3', '1e+', '--1', '+1',
    ' 1', '1 ', '1_000', '1,5', '0x10', '٣', '½', '１２', 'inf', '-inf', 'NaN', 'Infinity', '1e250', '1e-250',
    'true', 'TRUE', 'False', 'fALSe', 'truth', 'tru', 'yes', 't', 'f', 'falsey',
    '2020-02-29', '2021-02-29', '1900-02-29', '2000-02-29', '2021-04-31', '2021-04-30', '2021-13-01',
    '2021-00-10', '2021-01-00', '2021-12-31', '9999-12-31', '0001-01-01', '2021-1-01', '20210101',
    '2021/01/01', '2021-01-01T00:00', '-2021-01-01', '2021-01-011', '2021-0a-01', '2021-/1-01', '2021-01-1:',
    'x', 'S37', 'n/a', 'Ærø', '東京',
    // The engine's casts decide these; the scan must say it is not sure.
    `1${'0'.repeat(320)}`, '1e400', '1e-400', '0000-01-01', `1.${'1'.repeat(45)}e3`,
  ];
  const types: Array<[Exclude<ValueType, 'string'>, number]> = [
    ['integer', FITS_INTEGER],
    ['number', FITS_NUMBER],
    ['boolean', FITS_BOOLEAN],
    ['date', FITS_DATE],
  ];

  it('agrees with the engine on every value it is sure of, and is unsure only at the edges', async () => {
    const db = await DuckDBInstance.create(':memory:');
    const conn = await db.connect();
    const checks = types.map(([type]) => `${fitsTypeSql('v', type)} AS "${type}"`).join(', ');
    const rows = (
      await conn.runAndReadAll(`SELECT v, ${checks} FROM (SELECT unnest($values) AS v)`, { values: listValue(values) }, { values: LIST(VARCHAR) })
    ).getRowObjectsJS();
    db.closeSync();
    const unsure: string[] = [];
    for (const row of rows) {
      const text = row.v as string;
      const bytes = Buffer.from(text, 'utf8');
      const fits = textFits(bytes, 0, bytes.length);
      if (fits & UNSURE) {
        unsure.push(text);
        continue;
      }
      for (const [type, flag] of types) expect(Boolean(fits & flag), `${type} of ${JSON.stringify(text)}`).toBe(row[type] === true);
    }
    expect(unsure.map((t) => t.slice(0, 12))).toEqual([`1${'0'.repeat(11)}`, '1e400', '1e-400', '0000-01-01', '1.1111111111']);
  });
});

type Row = Record<string, string | null>;

// A typed column last, so a line ending left on its values would show.
const COLUMNS = ['id', 'n', 'x', 't', 'd', 'b'];

/**
 * CSV as exporting programs write it: missing is an empty field; `quoteText` quotes every text value
 * (as R's write.csv does), otherwise only those that need it; `crlf` ends lines with CR LF.
 */
function csv(rows: Row[], dialect: { quoteText: boolean; crlf: boolean }): string {
  const field = (v: string | null) =>
    v === null ? '' : (dialect.quoteText && !/^-?[0-9.e]+$/.test(v)) || v === '' || /[",]/.test(v) ? `"${v.replaceAll('"', '""')}"` : v;
  const end = dialect.crlf ? '\r\n' : '\n';
  return [COLUMNS.join(','), ...rows.map((r) => COLUMNS.map((c) => field(r[c])).join(','))].join(end) + end;
}

/** Seeds 1-2 plain, 3-4 every text quoted, 5-6 CR LF, 7-8 both. */
const dialectOf = (seed: number) => ({ quoteText: [3, 4, 7, 8].includes(seed), crlf: seed >= 5 });

/**
 * A pair as a new delivery of the same table looks: mostly the same lines in the same order, with
 * rows removed and added at random places, cells edited, some rows moved a little and a few moved
 * far. Rare odd values (text among numbers, an impossible date, "yes" among booleans) sit in rows that
 * may be edited or removed, so that whole columns change type between the sides.
 */
function alignedPair(seed: number): { oldRows: Row[]; newRows: Row[] } {
  const rand = random(seed);
  const pick = <T>(list: readonly T[]) => list[Math.floor(rand() * list.length)];
  const value: Record<string, (odd: number) => string | null> = {
    n: (odd) => (rand() < odd ? 'n/a' : rand() < 0.05 ? null : String(Math.floor(rand() * 200) - 20)),
    x: (odd) => (rand() < odd ? 'about 3' : rand() < 0.05 ? null : pick(['1.5', '2.25', '-0.125', '3', '1e3', '7.0'])),
    d: (odd) => (rand() < odd ? '2021-02-30' : rand() < 0.05 ? null : `2021-${String(1 + Math.floor(rand() * 12)).padStart(2, '0')}-${String(1 + Math.floor(rand() * 28)).padStart(2, '0')}`),
    b: (odd) => (rand() < odd ? 'yes' : rand() < 0.05 ? null : pick(['true', 'false', 'TRUE', 'False'])),
    t: () => (rand() < 0.05 ? null : pick(['alpha', 'Ærøskøbing', 'naïve café', '東京', 'emoji 🙂', 'x y', 'Smith, Ann', 'say "hi"', ''])),
  };
  const fresh = (id: string, odd: number): Row => ({ id, n: value.n(odd), x: value.x(odd), d: value.d(odd), b: value.b(odd), t: value.t(odd) });
  const oldRows: Row[] = [];
  for (let i = 0; i < 3000; i += 1) oldRows.push(fresh(`K${String(i * 7).padStart(6, '0')}`, 0));
  // Each odd value once, in a row that is often removed or edited: the column's type then changes.
  const planted = new Map([[5, 'n'], [700, 'x'], [1500, 'd'], [2200, 'b']]);
  for (const [at, column] of planted) oldRows[at][column] = value[column](1);
  // On even seeds the odd one in n is the empty string (quoted: "" is a value, not a missing one).
  if (seed % 2 === 0) oldRows[5].n = '';
  const newRows: Row[] = [];
  let added = 0;
  for (const [at, row] of oldRows.entries()) {
    if (rand() < (planted.has(at) ? 0.3 : 0.02)) continue;
    const copy = { ...row };
    if (planted.has(at) && rand() < 0.4) copy[planted.get(at)!] = value[planted.get(at)!](0);
    for (const column of ['n', 'x', 'd', 'b', 't']) if (rand() < 0.01) copy[column] = value[column](0.005);
    newRows.push(copy);
    if (rand() < 0.02) newRows.push(fresh(`N${String(added++).padStart(5, '0')}`, 0.002));
  }
  // A little further down, and far away (to the top, to the end).
  for (let i = 0; i < 30; i += 1) {
    const from = Math.floor(rand() * (newRows.length - 10));
    const [moved] = newRows.splice(from, 1);
    newRows.splice(from + 1 + Math.floor(rand() * 8), 0, moved);
  }
  for (let i = 0; i < 3; i += 1) newRows.unshift(...newRows.splice(1000 + Math.floor(rand() * 1000), 1));
  for (let i = 0; i < 3; i += 1) newRows.push(...newRows.splice(Math.floor(rand() * 1000), 1));
  return { oldRows, newRows };
}

/**
 * Plain SQL over each whole file, written here: each column's type by errata's documented rule (every
 * non-missing value an integer, else every one a number, a boolean, a date, else text), then the
 * cells that differ by value under both sides' types.
 */
async function oracle(oldFile: string, newFile: string, oldRows: Row[], newRows: Row[]) {
  const db = await DuckDBInstance.create(':memory:');
  const conn = await db.connect();
  const typeOf = async (file: string, column: string) => {
    const [row] = (
      await conn.runAndReadAll(`SELECT
          bool_and(regexp_full_match(v, '-?(0|[1-9][0-9]{0,17})')) AS integer,
          bool_and(regexp_full_match(v, '-?(0|[1-9][0-9]*)(\\.[0-9]+)?([eE][-+]?[0-9]+)?')) AS number,
          bool_and(lower(v) IN ('true', 'false')) AS boolean,
          bool_and(regexp_full_match(v, '[0-9]{4}-[0-9]{2}-[0-9]{2}') AND TRY_CAST(v AS DATE) IS NOT NULL) AS date
        FROM (SELECT "${column}" AS v FROM read_csv('${file}', header = true, all_varchar = true, allow_quoted_nulls = false)) WHERE v IS NOT NULL`)
    ).getRowObjectsJS();
    return (['integer', 'number', 'boolean', 'date'] as const).find((t) => row[t] === true) ?? 'string';
  };
  const types: Record<string, { old: string; new: string }> = {};
  for (const c of COLUMNS.slice(1)) types[c] = { old: await typeOf(oldFile, c), new: await typeOf(newFile, c) };
  db.closeSync();
  const numeric = (t: string) => t === 'integer' || t === 'number';
  const same = (c: string, o: string | null, n: string | null) => {
    if (o === n) return true;
    if (o === null || n === null) return false;
    if (numeric(types[c].old) && numeric(types[c].new)) return Number(o) === Number(n);
    if (types[c].old === 'boolean' && types[c].new === 'boolean') return o.toLowerCase() === n.toLowerCase();
    return false;
  };
  const oldById = new Map(oldRows.map((r) => [r.id!, r]));
  const newIds = new Set(newRows.map((r) => r.id!));
  const cells: Array<{ key: string; column: string; old: string | null; new: string | null }> = [];
  let changed = 0;
  for (const row of newRows) {
    const before = oldById.get(row.id!);
    if (!before) continue;
    const edits = COLUMNS.slice(1).filter((c) => !same(c, before[c], row[c]));
    if (edits.length) changed += 1;
    for (const c of edits) cells.push({ key: row.id!, column: c, old: before[c], new: row[c] });
  }
  const added = newRows.filter((r) => !oldById.has(r.id!)).length;
  const removed = oldRows.filter((r) => !newIds.has(r.id!)).length;
  const retyped = COLUMNS.slice(1).filter((c) => types[c].old !== types[c].new).map((c) => ({ column: c, from: types[c].old, to: types[c].new }));
  return { rows: { added, removed, changed, unchanged: newRows.length - added - changed }, cells, retyped };
}

const byKeyThenColumn = <T extends { key: string; column: string }>(cells: T[]) =>
  [...cells].sort((a, b) => (a.key === b.key ? COLUMNS.indexOf(a.column) - COLUMNS.indexOf(b.column) : a.key < b.key ? -1 : 1));

describe('keyed diff of two deliveries in much the same order', () => {
  let dir: string;
  beforeAll(() => {
    dir = tempDir();
  });
  afterAll(() => removeDir(dir));

  /** OLD and NEW written under the test folder as NAME-old.EXT and NAME-new.EXT. */
  const filePair = (name: string, oldText: string, newText: string, ext = 'csv') => {
    const [oldFile, newFile] = ['old', 'new'].map((side) => path.join(dir, `${name}-${side}.${ext}`));
    writeFileSync(oldFile, oldText);
    writeFileSync(newFile, newText);
    return { oldFile, newFile };
  };

  /** The aligned scan of a pair, its parts written beside OLD; comma-separated and keyed on id unless told. */
  const scan = (oldFile: string, newFile: string, options: Partial<AlignedScanOptions> & { header: readonly string[] }) =>
    scanAligned(oldFile, newFile, { delimiter: ',', key: ['id'], oldPart: `${oldFile}.old-part`, newPart: `${oldFile}.new-part`, ...options });

  it('agrees with a plain-SQL oracle over the whole files while reading only the differing lines into the engine', async () => {
    let retypes = 0;
    for (let seed = 1; seed <= 8; seed += 1) {
      const { oldRows, newRows } = alignedPair(seed);
      const { oldFile, newFile } = filePair(`seed-${seed}`, csv(oldRows, dialectOf(seed)), csv(newRows, dialectOf(seed)));
      // Small windows, so the scan refills many times and sees moved rows both near and far.
      const scanned = await scan(oldFile, newFile, { header: COLUMNS, windowBytes: 4096 });
      expect(scanned.kind, `seed ${seed}: ${scanned.kind === 'unsuitable' ? scanned.reason : ''}`).toBe('aligned');
      if (scanned.kind !== 'aligned') continue;
      expect(scanned.oldRows).toBe(oldRows.length);
      expect(scanned.newRows).toBe(newRows.length);
      const partLines = readFileSync(scanned.newPart, 'utf8').split('\n').length - 2;
      expect(partLines, `seed ${seed}`).toBeLessThan(newRows.length / 4);

      const expected = await oracle(oldFile, newFile, oldRows, newRows);
      retypes += expected.retyped.length;
      const diff = (await diffFiles(oldFile, newFile, { key: ['id'] })) as TableDiff;
      expect(diff.summary.rows, `seed ${seed}`).toEqual(expected.rows);
      expect(diff.retyped, `seed ${seed}`).toEqual(expected.retyped);
      expect(byKeyThenColumn(diff.cells), `seed ${seed}`).toEqual(byKeyThenColumn(expected.cells));
      expect(diff.addedKeys).toEqual(newRows.filter((r) => !oldRows.some((o) => o.id === r.id)).map((r) => r.id).sort());
    }
    // The pairs must really move columns between types, or the type counting is not checked.
    expect(retypes).toBeGreaterThanOrEqual(6);
  }, 120_000);

  it('walks on when a line is longer than its window, and leaves out only identical lines', async () => {
    // Windows of 2 KiB (8 x 256 bytes) and a 5,000-character note: the window must grow past the
    // memory the walk compares in, and the walk goes on comparing with Buffer.compare.
    const lines = Array.from({ length: 4000 }, (_, i) => `${i + 1},note ${i + 1}`);
    // Far enough in that the parts are a small share of what the walk has seen.
    lines[2999] = `3000,${'long note '.repeat(500)}`;
    const changed = lines.map((line, i) => (i === 2999 ? `3000,${'long note '.repeat(499)}long NOTE ` : i === 3499 ? '3500,note 3500 changed' : line));
    const { oldFile, newFile } = filePair('long-line', ['id,note', ...lines].join('\n') + '\n', ['id,note', ...changed].join('\n') + '\n');
    const scanned = await scan(oldFile, newFile, { header: ['id', 'note'], windowBytes: 256 });
    expect(scanned).toMatchObject({ kind: 'aligned', oldPartLines: 2, newPartLines: 2 });
    const diff = (await diffFiles(oldFile, newFile, { key: ['id'] })) as TableDiff;
    expect(diff.cells.map((c) => [c.key, c.new?.slice(-10)])).toEqual([
      ['3000', 'long NOTE '],
      ['3500', '00 changed'],
    ]);
  });

  it('steps aside for a line break inside quotes in the old file, and the whole-file diff answers', async () => {
    const { oldFile, newFile } = filePair('break', 'id,note\n1,"two\nlines"\n2,Lee\n3,Kim\n', 'id,note\n1,"two\nlines"\n2,Lea\n3,Kim\n');
    expect(await scan(oldFile, newFile, { header: ['id', 'note'] })).toEqual({ kind: 'unsuitable', reason: 'line break inside quotes' });
    const diff = (await diffFiles(oldFile, newFile, { key: ['id'] })) as TableDiff;
    expect(diff.cells).toEqual([{ key: '2', column: 'note', old: 'Lee', new: 'Lea' }]);
  });

  it('leaves a new file with a line break inside quotes to the whole-file diff, which reads it as one row', async () => {
    // Row 2's note now spans two lines; its second line looks like a row of its own ("4,x").
    const { oldFile, newFile } = filePair('newbreak', 'id,note\n1,a\n2,b\n3,c\n', 'id,note\n1,a\n2,"b\n4,x"\n3,c\n');
    expect((await scan(oldFile, newFile, { header: ['id', 'note'] })).kind).toBe('aligned');
    const diff = (await diffFiles(oldFile, newFile, { key: ['id'] })) as TableDiff;
    expect(diff.summary.rows).toEqual({ added: 0, removed: 0, changed: 1, unchanged: 2 });
    expect(diff.cells).toEqual([{ key: '2', column: 'note', old: 'b', new: 'b\n4,x' }]);
  });

  it('names the new file and its data rows when a changed line repeats the key of an unchanged one', async () => {
    const lines = Array.from({ length: 50 }, (_, i) => `${i + 1},v${i + 1}`);
    // Data row 40 of the new file says id 3 again; row 3 is unchanged, so only the whole file shows it.
    const { oldFile, newFile } = filePair('dup', ['id,v', ...lines].join('\n') + '\n', ['id,v', ...lines.map((l, i) => (i === 39 ? '3,v40' : l))].join('\n') + '\n');
    await expect(diffFiles(oldFile, newFile, { key: ['id'] })).rejects.toMatchObject({
      code: 'KEY_DUPLICATE',
      message: expect.stringContaining('3 (2 rows: data rows 3, 40)'),
      data: expect.objectContaining({ file: newFile, line: 41 }),
    });
  });

  it('reports how far it is: comparing the two files, counting the old one, then the rows that differ', async () => {
    const { oldRows, newRows } = alignedPair(3);
    const { oldFile, newFile } = filePair('progress', csv(oldRows, dialectOf(1)), csv(newRows, dialectOf(1)));
    const events: FileDiffProgress[] = [];
    await diffFiles(oldFile, newFile, { key: ['id'], onProgress: (event) => events.push(event) });
    const steps = events.map((e) => e.step).filter((step, i, all) => step !== all[i - 1]);
    // Here the old file is counted after the walk; the command line counts a long one at the same time.
    expect(steps).toEqual(['compare', 'count', 'differing rows']);
    for (const step of ['count', 'compare'] as const) {
      const shares = events.flatMap((e) => (e.step === step ? [e.share] : []));
      expect(shares).toEqual([...shares].sort((a, b) => a - b));
      expect(shares.at(-1)).toBeGreaterThan(0.9);
      expect(shares.at(-1)).toBeLessThanOrEqual(1);
    }
    const whole: FileDiffProgress[] = [];
    await diffFiles(oldFile, newFile, { key: [], onProgress: (event) => whole.push(event) });
    expect(whole).toEqual([{ step: 'whole files' }]);
  });

  it('steps aside before reading the old file through when the new one has its rows in another order', async () => {
    const { oldRows } = alignedPair(5);
    // Sorted by the text column instead of the key: the same rows, hardly a line where it was.
    const resorted = [...oldRows].sort((a, b) => ((a.t ?? '') < (b.t ?? '') ? -1 : (a.t ?? '') > (b.t ?? '') ? 1 : 0));
    resorted[7] = { ...resorted[7], x: '42' };
    const { oldFile, newFile } = filePair('order', csv(oldRows, dialectOf(1)), csv(resorted, dialectOf(1)));
    expect(await scan(oldFile, newFile, { header: COLUMNS, windowBytes: 4096 })).toEqual({ kind: 'unsuitable', reason: 'the files start with different lines' });
    const diff = (await diffFiles(oldFile, newFile, { key: ['id'] })) as TableDiff;
    expect(diff.summary.rows).toEqual({ added: 0, removed: 0, changed: 1, unchanged: oldRows.length - 1 });
    expect(diff.cells).toEqual([{ key: resorted[7].id, column: 'x', old: oldRows.find((r) => r.id === resorted[7].id)!.x, new: '42' }]);
  });

  it('pairs rows by a key of two columns that are not the first, in a TSV file', async () => {
    const header = 'visit\tsite\tid\tweight';
    const rows = Array.from({ length: 40 }, (_, i) => `v${i % 3}\t${i % 2 ? 'north' : 'south'}\t${i}\t${60 + i}`);
    // By hand: (south, 4) weighs 99 instead of 64; (north, 7) is gone; (east, 7) is new (same id,
    // another site); (south, 10) moved to the end unchanged.
    const changed = rows.map((r, i) => (i === 4 ? 'v1\tsouth\t4\t99' : r)).filter((_, i) => i !== 7 && i !== 10);
    changed.splice(20, 0, 'v0\teast\t7\t50');
    changed.push(rows[10]);
    const { oldFile, newFile } = filePair('pair', [header, ...rows].join('\n') + '\n', [header, ...changed].join('\n') + '\n', 'tsv');
    expect((await scan(oldFile, newFile, { delimiter: '\t', header: header.split('\t'), key: ['site', 'id'] })).kind).toBe('aligned');
    const diff = (await diffFiles(oldFile, newFile, { key: ['site', 'id'] })) as TableDiff;
    expect(diff.summary.rows).toEqual({ added: 1, removed: 1, changed: 1, unchanged: 38 });
    expect(diff.cells).toEqual([{ key: '["south","4"]', column: 'weight', old: '64', new: '99' }]);
    expect(diff.addedKeys).toEqual(['["east","7"]']);
    expect(diff.removedKeys).toEqual(['["north","7"]']);
    // Asked for counts only, the same diff lists no keys.
    const counts = (await diffFiles(oldFile, newFile, { key: ['site', 'id'], cellLimit: 0, rowKeys: false })) as TableDiff;
    expect(counts.summary).toEqual(diff.summary);
    expect([counts.addedKeys, counts.removedKeys, counts.cells]).toEqual([[], [], []]);
  });

  it('finds a key of the old file repeated in the other half of it, which is counted apart', async () => {
    const oldFile = path.join(dir, 'halves-old.csv');
    const keys = Array.from({ length: 3000 }, (_, i) => `K${i}`);
    keys[2899] = keys[9];
    writeFileSync(oldFile, ['id,v', ...keys.map((k, i) => `${k},${i % 7}`)].join('\n') + '\n');
    expect(await scan(oldFile, oldFile, { header: ['id', 'v'], windowBytes: 4096 })).toEqual({ kind: 'unsuitable', reason: 'repeated key' });
    await expect(diffFiles(oldFile, oldFile, { key: ['id'] })).rejects.toMatchObject({
      code: 'KEY_DUPLICATE',
      message: expect.stringContaining('K9 (2 rows: data rows 10, 2900)'),
    });
  });

  it('leaves an old file with more rows than its memory allows to the whole-file diff', async () => {
    const { oldRows, newRows } = alignedPair(2);
    const { oldFile, newFile } = filePair('big', csv(oldRows, dialectOf(1)), csv(newRows, dialectOf(1)));
    expect(await scan(oldFile, newFile, { header: COLUMNS, maxRows: 2000 })).toEqual({ kind: 'unsuitable', reason: 'too many rows for the memory of the scan' });
    expect((await scan(oldFile, newFile, { header: COLUMNS, maxRows: 4000 })).kind).toBe('aligned');
  });

  it('leaves a missing file to the whole-file diff, which names it', async () => {
    const present = path.join(dir, 'present.csv');
    const missing = path.join(dir, 'missing.csv');
    writeFileSync(present, 'id,v\n1,a\n');
    for (const [oldFile, newFile] of [[missing, present], [present, missing]]) {
      await expect(diffFiles(oldFile, newFile, { key: ['id'] })).rejects.toMatchObject({ code: 'INPUT_MISSING', data: { file: missing } });
    }
  });

  it('names the new file and line of a ragged row among the differing lines', async () => {
    const lines = Array.from({ length: 50 }, (_, i) => `${i + 1},v${i + 1},w`);
    const { oldFile, newFile } = filePair('ragged', ['id,v,w', ...lines].join('\n') + '\n', ['id,v,w', ...lines.map((l, i) => (i === 29 ? '30,v30' : l))].join('\n') + '\n');
    await expect(diffFiles(oldFile, newFile, { key: ['id'] })).rejects.toMatchObject({
      code: 'CSV_MALFORMED',
      data: expect.objectContaining({ file: newFile, line: 31 }),
    });
  });
});
