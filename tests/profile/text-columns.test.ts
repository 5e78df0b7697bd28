import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { Session } from '../../src/engine/session.js';
import { profileFile } from '../../src/profile/profile-file.js';
import { readCodebookFile } from '../../src/project/codebook.js';
import { removeDir, tempDir } from '../helpers/project.js';
import { columnOf } from './profile-fixtures.js';

/**
 * A delivery's columns stay text in the table and the profile casts each distinct text once. These
 * cases check that this is invisible: texts that are one value count as one value, and rows are
 * still ordered by the key's own type. Expected figures are worked by hand beside each check.
 */
const dir = tempDir('errata-profile-text-');
afterAll(() => removeDir(dir));

function write(name: string, text: string): string {
  const file = path.join(dir, name);
  writeFileSync(file, text);
  return file;
}

describe('profiling columns held as text', () => {
  it('two spellings of one number declared as a number are one value', async () => {
    const file = write('doses.csv', 'id,dose\n1,1.5\n2,1.50\n3,2\n4,-1\n');
    const codebook = readCodebookFile(write('doses.yaml', 'primaryKey: id\nfields:\n  - { name: id, type: integer }\n  - { name: dose, type: number }\n'));
    const dose = columnOf(await profileFile(file, { key: ['id'], codebook, spillDir: path.join(dir, 'spill') }), 'dose');
    expect(dose.type).toBe('number');
    // Values −1, 1.5, 1.5, 2: three distinct values, not four texts.
    expect(dose.n).toBe(4);
    expect(dose.distinct).toBe(3);
    // Mean (−1 + 1.5 + 1.5 + 2) / 4 = 1; deviations −2, 0.5, 0.5, 1; squares sum 5.5; sd √(5.5 / 3).
    expect(dose.mean).toBeCloseTo(1, 12);
    expect(dose.sd).toBeCloseTo(Math.sqrt(5.5 / 3), 12);
    // Type 7 median of the sorted (−1, 1.5, 1.5, 2): h = (4 − 1)·0.5 = 1.5, between 1.5 and 1.5.
    expect(dose.median).toBe(1.5);
    // The lowest values with their rows: −1 (row 4), then 1.5 in rows 1 and 2, each shown as the value it is.
    expect(dose.extremes?.lowest).toEqual([
      { key: '4', value: '-1' },
      { key: '1', value: '1.5' },
      { key: '2', value: '1.5' },
      { key: '3', value: '2' },
    ]);
    expect(dose.extremes?.highest.map((e) => e.key)).toEqual(['3', '1', '2', '4']);
  });

  it('ties are listed in the order of an integer key, not of its text', async () => {
    // Every row holds 5: the extremes are the rows in key order 2, 9, 10, 11 (as text, "10" < "2").
    const file = write('ties.csv', 'id,x\n10,5\n9,5\n11,5\n2,5\n');
    const x = columnOf(await profileFile(file, { key: ['id'], spillDir: path.join(dir, 'spill') }), 'x');
    expect(x.type).toBe('integer');
    expect(x.extremes?.lowest.map((e) => e.key)).toEqual(['2', '9', '10', '11']);
    expect(x.extremes?.highest.map((e) => e.key)).toEqual(['2', '9', '10', '11']);
  });

  it('a Parquet file keeps its own types; only its text columns are grouped and detected', async () => {
    // Written by DuckDB: dose DOUBLE (typed already), code VARCHAR holding whole numbers (detected as integers).
    const file = path.join(dir, 'typed.parquet');
    const session = await Session.open();
    try {
      await session.run(`COPY (SELECT * FROM (VALUES (1, 2.5, '7'), (2, 3.5, '8'), (3, 6.5, '9')) AS t(id, dose, code)) TO '${file}' (FORMAT parquet)`);
    } finally {
      session.close();
    }
    const profile = await profileFile(file, { key: ['id'], spillDir: path.join(dir, 'spill') });
    const dose = columnOf(profile, 'dose');
    // Mean (2.5 + 3.5 + 6.5) / 3 = 4.1666…; the lowest value 2.5 is row 1's.
    expect(dose.type).toBe('number');
    expect(dose.mean).toBeCloseTo(12.5 / 3, 12);
    expect(dose.extremes?.lowest[0]).toEqual({ key: '1', value: '2.5' });
    const code = columnOf(profile, 'code');
    expect(code.type).toBe('integer');
    expect([code.min, code.median, code.max]).toEqual([7, 8, 9]);
  });

  it('rows flagged by value are found through their text', async () => {
    // 999 stands far apart from blood pressures near 120; its rows are 3 and 5.
    const values = ['118', '121', '999', '119', '999', '122', '120', '117', '123', '121', '118', '120'];
    const file = write('bp.csv', `id,sbp\n${values.map((v, i) => `${i + 1},${v}`).join('\n')}\n`);
    const sbp = columnOf(await profileFile(file, { key: ['id'], spillDir: path.join(dir, 'spill') }), 'sbp');
    expect(sbp.type).toBe('integer');
    expect(sbp.flags).toEqual(expect.arrayContaining([expect.objectContaining({ kind: 'sentinel', value: '999', count: 2, keys: ['3', '5'] })]));
  });
});
