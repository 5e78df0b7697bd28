import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { DuckDBInstance, type DuckDBConnection } from '@duckdb/node-api';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildProject } from '../../src/build/build-project.js';
import { ErrataError } from '../../src/errors.js';
import { WorkingTree } from '../../src/git/tree.js';
import { errata, makeProject, removeDir, tempDir, writeFiles, type CliResult } from '../helpers/project.js';

/**
 * Each test writes a tiny project (one table `t` keyed by `id`), runs the real `errata build`, and
 * compares clean/t.csv and clean/t.lineage.parquet with values worked out by hand in the test (the
 * arithmetic is in the comments) or by a separate plain DuckDB query over the same raw file.
 */

const CONFIG = 'tables:\n  t:\n    raw: raw/t/\n    key: id\n';

interface LineageRecord {
  key: string | null;
  column: string | null;
  old: string | null;
  new: string | null;
  correction: string;
  step: number;
  change: string;
}

let duck: DuckDBInstance;
let db: DuckDBConnection;
const roots: string[] = [];

beforeAll(async () => {
  duck = await DuckDBInstance.create(':memory:');
  db = await duck.connect();
});

afterAll(() => {
  db.closeSync();
  duck.closeSync();
  for (const root of roots) removeDir(root);
});

function sqlString(text: string): string {
  return `'${text.replaceAll("'", "''")}'`;
}

async function query<T>(sql: string): Promise<T[]> {
  const reader = await db.runAndReadAll(sql);
  return reader.getRowObjectsJS() as T[];
}

interface Built {
  root: string;
  result: CliResult;
  csv: string | null;
  lineage: LineageRecord[];
}

/** Build a one-table project from a raw CSV and correction files (name → YAML). */
async function build(raw: string, corrections: Record<string, string>, args: string[] = [], extra: Record<string, string> = {}): Promise<Built> {
  const files: Record<string, string> = { 'errata.yaml': CONFIG, 'raw/t/delivery.csv': raw, ...extra };
  for (const [name, yaml] of Object.entries(corrections)) files[`corrections/t/${name}`] = yaml;
  const root = await makeProject(files, { commit: false });
  roots.push(root);
  const result = await errata(root, ['build', ...args]);
  const csvFile = path.join(root, 'clean', 't.csv');
  const lineageFile = path.join(root, 'clean', 't.lineage.parquet');
  return {
    root,
    result,
    csv: existsSync(csvFile) ? readFileSync(csvFile, 'utf8') : null,
    lineage: existsSync(lineageFile) ? await readLineage(lineageFile) : [],
  };
}

async function readLineage(file: string): Promise<LineageRecord[]> {
  return query<LineageRecord>(`SELECT "key", "column", "old", "new", "correction", "step", "change" FROM read_parquet(${sqlString(file)})`);
}

/** Cell records only, in a fixed order of our own, so the comparison does not depend on the writer's order. */
function cells(lineage: LineageRecord[]): LineageRecord[] {
  return sorted(lineage.filter((r) => r.change === 'cell'));
}

function sorted(records: LineageRecord[]): LineageRecord[] {
  const text = (v: unknown) => (v === null ? '' : String(v));
  return [...records].sort((a, b) =>
    a.step - b.step || text(a.column).localeCompare(text(b.column)) || text(a.key).localeCompare(text(b.key), undefined, { numeric: true }),
  );
}

/** A lineage cell record as the test expects it. */
function cell(correction: string, step: number, key: string, column: string, old: string | null, next: string | null): LineageRecord {
  return { key, column, old, new: next, correction, step, change: 'cell' };
}

/** Column-level events (renamed, dropped, added, retyped), reduced to what they are about. */
function events(lineage: LineageRecord[]): Array<{ step: number; column: string | null; change: string }> {
  return lineage
    .filter((r) => r.change !== 'cell' && r.change !== 'row-deleted')
    .map((r) => ({ step: r.step, column: r.column, change: r.change }))
    .sort((a, b) => a.step - b.step || String(a.column).localeCompare(String(b.column)));
}

describe('set', () => {
  it('set with where converts inch heights to centimetres by the exact factor', async () => {
    // inch = 2.54 cm exactly (NIST SP 811, Appendix B).
    //   60.5 in × 2.54 = 152.4 + 1.27  = 153.67  → round to 0.1: 153.7
    //   65.5 in × 2.54 = 165.1 + 1.27  = 166.37  → 166.4
    //   89.9 in × 2.54 = 226.06 + 2.286 = 228.346 → 228.3
    // 170.2 is not under 90 and stays; a missing height is not under 90 either (null < 90 is unknown).
    const built = await build('id,height\n1,60.5\n2,170.2\n3,65.5\n4,\n5,89.9\n', {
      '0001-height-inches.yaml': [
        'reason: Heights under 90 were entered in inches; convert to centimetres',
        'steps:',
        '  - set: { height: "round(height * 2.54, 1)" }',
        '    where: height < 90',
        '',
      ].join('\n'),
    });
    expect(built.result.code, built.result.stderr).toBe(0);
    expect(built.csv).toBe('id,height\n1,153.7\n2,170.2\n3,166.4\n4,\n5,228.3\n');
    const c = '0001-height-inches.yaml';
    expect(cells(built.lineage)).toEqual([
      cell(c, 1, '1', 'height', '60.5', '153.7'),
      cell(c, 1, '3', 'height', '65.5', '166.4'),
      cell(c, 1, '5', 'height', '89.9', '228.3'),
    ]);
    expect(built.lineage).toHaveLength(3);
  });

  it('set assigns several columns at once and converts pounds to kilograms by the exact factor', async () => {
    // pound (avoirdupois) = 0.45359237 kg exactly (NIST SP 811, Appendix B).
    //   150.5 lb × 0.45359237 = 68.0388555 + 0.226796185 = 68.265651685 kg → round to 0.01: 68.27
    //   200.25 lb × 0.45359237 = 90.718474 + 0.1133980925 = 90.8318720925 kg → 90.83
    // Row 4 has no weight: null × factor is null (no change), but its unit still changes lb → kg.
    const built = await build('id,weight,unit\n1,150.5,lb\n2,70.5,kg\n3,200.25,lb\n4,,lb\n', {
      '0001-pounds.yaml': [
        'reason: Weights recorded in pounds; convert to kilograms',
        'steps:',
        '  - set:',
        '      weight: "round(weight * 0.45359237, 2)"',
        '      unit: "\'kg\'"',
        "    where: unit = 'lb'",
        '',
      ].join('\n'),
    });
    expect(built.result.code, built.result.stderr).toBe(0);
    expect(built.csv).toBe('id,weight,unit\n1,68.27,kg\n2,70.5,kg\n3,90.83,kg\n4,,kg\n');
    const c = '0001-pounds.yaml';
    expect(cells(built.lineage)).toEqual([
      cell(c, 1, '1', 'unit', 'lb', 'kg'),
      cell(c, 1, '3', 'unit', 'lb', 'kg'),
      cell(c, 1, '4', 'unit', 'lb', 'kg'),
      cell(c, 1, '1', 'weight', '150.5', '68.27'),
      cell(c, 1, '3', 'weight', '200.25', '90.83'),
    ]);
    expect(built.lineage).toHaveLength(5);
  });

  it('set records only cells whose value really changes, null to null being no change', async () => {
    // Step 1 turns 5 into 6 (a change); row 2 stays null and row 3 stays 7 (no change).
    // Step 2 fills row 2's null with 0: null → value is a change.
    // Step 3 assigns b to itself: nothing changes, nothing is recorded.
    const built = await build('id,a,b\n1,5,x\n2,,y\n3,7,\n', {
      '0001-fill.yaml': [
        'reason: Fill in values confirmed by the site',
        'steps:',
        '  - set: { a: "CASE WHEN a = 5 THEN 6 ELSE a END" }',
        '  - set: { a: "coalesce(a, 0)" }',
        '    where: id = 2',
        '  - set: { b: "b" }',
        '',
      ].join('\n'),
    });
    expect(built.result.code, built.result.stderr).toBe(0);
    expect(built.csv).toBe('id,a,b\n1,6,x\n2,0,y\n3,7,\n');
    const c = '0001-fill.yaml';
    expect(sorted(built.lineage)).toEqual([cell(c, 1, '1', 'a', '5', '6'), cell(c, 2, '2', 'a', null, '0')]);
  });

  it('set keeps the fraction an expression produces in a column of whole numbers', async () => {
    // The design's own example: heights delivered as whole numbers, some in inches.
    // inch = 2.54 cm exactly (NIST SP 811, Appendix B): 60 × 2.54 = 152.4; 65 × 2.54 = 165.1.
    // Rounding 152.4 to 152 without a word would lose the decision's precision.
    const built = await build('id,height\n1,60\n2,170\n3,65\n', {
      '0001-height-inches.yaml': [
        'reason: Heights under 90 were entered in inches',
        'steps:',
        '  - set: { height: "round(height * 2.54, 1)" }',
        '    where: height < 90',
        '',
      ].join('\n'),
    });
    expect(built.result.code, built.result.stderr).toBe(0);
    const rows = await query<{ id: bigint; height: number }>(
      `SELECT id, height FROM read_csv(${sqlString(path.join(built.root, 'clean', 't.csv'))}, header = true, columns = {'id': 'BIGINT', 'height': 'DOUBLE'}) ORDER BY id`,
    );
    expect(rows.map((r) => r.height)).toEqual([152.4, 170, 165.1]);
  });

  it('set-where and recode give the same clean table and lineage as plain DuckDB over the raw file', async () => {
    // 20 invented rows: some heights in inches (under 90), smoker coded 1/2/9.
    const heights = [60.5, 172.3, 181.1, 66.25, 159.4, 70.75, 190.2, 64.5, 155.8, 168.6, 88.5, 175.1, 61.75, 162.9, 177.7, 72.5, 150.3, 185.6, 69.5, 158.2];
    const smoker = ['1', '2', '9', '1', '2', '2', '1', '9', '2', '1', '1', '2', '', '1', '2', '9', '1', '2', '2', '1'];
    const raw = 'id,height,smoker\n' + heights.map((h, i) => `${i + 1},${h},${smoker[i]}`).join('\n') + '\n';
    const built = await build(raw, {
      '0001-inches.yaml': 'reason: Inches at one site\nsteps:\n  - set: { height: "round(height * 2.54, 1)" }\n    where: height < 90\n',
      '0002-smoker-labels.yaml': 'reason: Label the smoking codes\nsteps:\n  - recode: { column: smoker, map: { 1: "yes", 2: "no", 9: ~ } }\n',
    });
    expect(built.result.code, built.result.stderr).toBe(0);

    const rawFile = sqlString(path.join(built.root, 'raw', 't', 'delivery.csv'));
    const typedRaw = `read_csv(${rawFile}, header = true, columns = {'id': 'BIGINT', 'height': 'DOUBLE', 'smoker': 'VARCHAR'})`;
    const expected = await query<{ id: bigint; height: number; smoker: string | null }>(`
      SELECT id,
             CASE WHEN height < 90 THEN round(height * 2.54, 1) ELSE height END AS height,
             CASE smoker WHEN '1' THEN 'yes' WHEN '2' THEN 'no' WHEN '9' THEN NULL ELSE smoker END AS smoker
      FROM ${typedRaw} ORDER BY id`);
    const actual = await query<{ id: bigint; height: number; smoker: string | null }>(`
      SELECT * FROM read_csv(${sqlString(path.join(built.root, 'clean', 't.csv'))}, header = true,
        columns = {'id': 'BIGINT', 'height': 'DOUBLE', 'smoker': 'VARCHAR'}) ORDER BY id`);
    expect(actual).toEqual(expected);

    const expectedHeights = await query<{ key: string; old: number; new: number }>(`
      SELECT CAST(id AS VARCHAR) AS key, height AS old, round(height * 2.54, 1) AS new
      FROM ${typedRaw} WHERE height < 90 ORDER BY id`);
    const recordedHeights = built.lineage
      .filter((r) => r.column === 'height')
      .map((r) => ({ key: r.key, old: Number(r.old), new: Number(r.new) }))
      .sort((a, b) => Number(a.key) - Number(b.key));
    expect(recordedHeights).toEqual(expectedHeights);

    const expectedSmoker = await query<{ key: string; old: string; new: string | null }>(`
      SELECT CAST(id AS VARCHAR) AS key, smoker AS old,
             CASE smoker WHEN '1' THEN 'yes' WHEN '2' THEN 'no' ELSE NULL END AS new
      FROM ${typedRaw} WHERE smoker IN ('1', '2', '9') ORDER BY id`);
    const recordedSmoker = built.lineage
      .filter((r) => r.column === 'smoker' && r.change === 'cell')
      .map((r) => ({ key: r.key, old: r.old, new: r.new }))
      .sort((a, b) => Number(a.key) - Number(b.key));
    expect(recordedSmoker).toEqual(expectedSmoker);
  });
});

describe('edit', () => {
  const weights = 'id,weight\n1,7.12\n2,65.3\n3,80.25\n';

  it('edit changes a single cell guarded by the value the decision was made on', async () => {
    const built = await build(weights, {
      '0001-decimal-slip.yaml': [
        'reason: Decimal point slipped when weight was typed in',
        'approval: N-0001',
        'steps:',
        '  - edit:',
        '      - { key: 1, column: weight, from: 7.12, to: 71.2 }',
        '',
      ].join('\n'),
    });
    expect(built.result.code, built.result.stderr).toBe(0);
    expect(built.csv).toBe('id,weight\n1,71.2\n2,65.3\n3,80.25\n');
    expect(built.lineage).toEqual([cell('0001-decimal-slip.yaml', 1, '1', 'weight', '7.12', '71.2')]);
  });

  it('build reports a conflict when a guarded edit no longer matches, and writes nothing', async () => {
    const yaml = [
      'reason: Weights checked against the paper forms', // line 1
      'steps:', // line 2
      '  - edit:', // line 3
      '      - { key: 1, column: weight, from: 7.12, to: 71.2 }', // line 4
      '      - { key: 2, column: weight, from: 60, to: 66 }', // line 5: the cell holds 65.3, not 60
      '',
    ].join('\n');
    const built = await build(weights, { '0001-paper-forms.yaml': yaml });
    expect(built.result.code).toBe(1);
    expect(built.result.stderr).toContain('corrections/t/0001-paper-forms.yaml:5: (2, weight) expected 60, found 65.3');
    expect(built.result.stderr).not.toContain('0001-paper-forms.yaml:4');
    expect(built.csv).toBeNull();
    expect(existsSync(path.join(built.root, 'clean', 't.lineage.parquet'))).toBe(false);
  });

  it('build with --allow-conflicts applies the edits that still match and leaves the others', async () => {
    const yaml = [
      'reason: Weights checked against the paper forms',
      'steps:',
      '  - edit:',
      '      - { key: 1, column: weight, from: 7.12, to: 71.2 }',
      '      - { key: 2, column: weight, from: 60, to: 66 }',
      '',
    ].join('\n');
    const built = await build(weights, { '0001-paper-forms.yaml': yaml }, ['--allow-conflicts']);
    expect(built.result.code).toBe(1);
    expect(built.csv).toBe('id,weight\n1,71.2\n2,65.3\n3,80.25\n');
    expect(built.lineage).toEqual([cell('0001-paper-forms.yaml', 1, '1', 'weight', '7.12', '71.2')]);
  });

  it('build reports a conflict when the edited row is no longer in the delivery', async () => {
    const yaml = [
      'reason: Weight confirmed by phone', // line 1
      'steps:', // line 2
      '  - edit:', // line 3
      '      - { key: 9, column: weight, from: 58.5, to: 85.5 }', // line 4: there is no row 9
      '',
    ].join('\n');
    const built = await build(weights, { '0001-phone.yaml': yaml });
    expect(built.result.code).toBe(1);
    expect(built.result.stderr).toContain('corrections/t/0001-phone.yaml:4: (9, weight) expected 58.5, the row is not there');
    expect(built.csv).toBeNull();
  });

  it('edit with from: ~ matches a missing cell only, never an empty text', async () => {
    // Row 1's note is missing (empty field); row 2's is the empty text (quoted ""); row 3 holds "ok".
    const yaml = [
      'reason: Notes read from the paper forms', // line 1
      'steps:', // line 2
      '  - edit:', // line 3
      '      - { key: 1, column: note, from: ~, to: seen }', // line 4
      '      - { key: 2, column: note, from: ~, to: seen }', // line 5: "" is not missing → conflict
      '      - { key: 3, column: note, from: ok, to: ~ }', // line 6: a value made missing
      '',
    ].join('\n');
    const built = await build('id,note\n1,\n2,""\n3,ok\n', { '0001-notes.yaml': yaml }, ['--allow-conflicts']);
    expect(built.result.code).toBe(1);
    expect(built.result.stderr).toContain('corrections/t/0001-notes.yaml:5: (2, note) expected ∅, found ""');
    expect(built.result.stderr).not.toContain('0001-notes.yaml:4');
    expect(built.result.stderr).not.toContain('0001-notes.yaml:6');
    expect(built.csv).toBe('id,note\n1,seen\n2,""\n3,\n');
    const c = '0001-notes.yaml';
    expect(cells(built.lineage)).toEqual([cell(c, 1, '1', 'note', null, 'seen'), cell(c, 1, '3', 'note', 'ok', null)]);
    expect(built.lineage).toHaveLength(2);
  });

  it('edit whose new value equals the current one records nothing', async () => {
    const built = await build(weights, {
      '0001-confirmed.yaml': 'reason: Value confirmed\nsteps:\n  - edit:\n      - { key: 2, column: weight, from: 65.3, to: 65.30 }\n',
    });
    expect(built.result.code, built.result.stderr).toBe(0);
    expect(built.csv).toBe(weights);
    expect(built.lineage).toEqual([]);
  });
});

describe('recode', () => {
  it('recode turns numeric codes into text labels and, with else: keep, leaves other codes as they are', async () => {
    // 1 → male, 2 → female; 3 is not in the map and stays "3"; the missing value stays missing.
    const built = await build('id,sex\n1,1\n2,2\n3,3\n4,1\n5,\n', {
      '0001-sex-labels.yaml': 'reason: Labels from the codebook\nsteps:\n  - recode: { column: sex, map: { 1: male, 2: female }, else: keep }\n',
    });
    expect(built.result.code, built.result.stderr).toBe(0);
    expect(built.csv).toBe('id,sex\n1,male\n2,female\n3,3\n4,male\n5,\n');
    const c = '0001-sex-labels.yaml';
    expect(cells(built.lineage)).toEqual([
      cell(c, 1, '1', 'sex', '1', 'male'),
      cell(c, 1, '2', 'sex', '2', 'female'),
      cell(c, 1, '4', 'sex', '1', 'male'),
    ]);
    // The column went from numbers to text: recorded as one column event, not as cell changes.
    expect(events(built.lineage)).toEqual([{ step: 1, column: 'sex', change: 'column-retyped' }]);
  });

  it('recode with else: missing blanks every value the map does not name', async () => {
    // a → A (change), b → b (same value: nothing recorded), c and d → missing, missing stays missing.
    const built = await build('id,grade\n1,a\n2,b\n3,c\n4,d\n5,\n', {
      '0001-grades.yaml': 'reason: Only grades a and b are valid\nsteps:\n  - recode: { column: grade, map: { a: A, b: b }, else: missing }\n',
    });
    expect(built.result.code, built.result.stderr).toBe(0);
    expect(built.csv).toBe('id,grade\n1,A\n2,b\n3,\n4,\n5,\n');
    const c = '0001-grades.yaml';
    expect(built.lineage).toHaveLength(3);
    expect(cells(built.lineage)).toEqual([
      cell(c, 1, '1', 'grade', 'a', 'A'),
      cell(c, 1, '3', 'grade', 'c', null),
      cell(c, 1, '4', 'grade', 'd', null),
    ]);
  });

  it('recode with else: { value: X } gives every value the map does not name one code', async () => {
    // 1 → 10, 9 → missing, 2 and 3 → 0 (the else value). The column stays numeric.
    const built = await build('id,level\n1,1\n2,2\n3,3\n4,9\n', {
      '0001-levels.yaml': 'reason: Collapse the levels\nsteps:\n  - recode: { column: level, map: { 1: 10, 9: ~ }, else: { value: 0 } }\n',
    });
    expect(built.result.code, built.result.stderr).toBe(0);
    expect(built.csv).toBe('id,level\n1,10\n2,0\n3,0\n4,\n');
    const c = '0001-levels.yaml';
    expect(sorted(built.lineage)).toEqual([
      cell(c, 1, '1', 'level', '1', '10'),
      cell(c, 1, '2', 'level', '2', '0'),
      cell(c, 1, '3', 'level', '3', '0'),
      cell(c, 1, '4', 'level', '9', null),
    ]);
  });
});

describe('missing', () => {
  it('missing turns listed sentinel values into missing values, with where limiting the rows', async () => {
    // Step 1: every -99 in a → missing (rows 1 and 3).
    // Step 2: -99 in b → missing only where id > 2 (row 3; row 2 keeps -99).
    // Step 3: no values list, only where: c above 100 → missing (rows 2 and 4).
    const raw = 'id,a,b,c\n1,-99,5,50\n2,4,-99,120\n3,-99,-99,80\n4,,7,101\n';
    const built = await build(raw, {
      '0001-sentinels.yaml': [
        'reason: -99 means not asked; c above 100 is impossible',
        'steps:',
        '  - missing: { column: a, values: [-99] }',
        '  - missing: { columns: [b], values: [-99] }',
        '    where: id > 2',
        '  - missing: { column: c }',
        '    where: c > 100',
        '',
      ].join('\n'),
    });
    expect(built.result.code, built.result.stderr).toBe(0);
    expect(built.csv).toBe('id,a,b,c\n1,,5,50\n2,4,-99,\n3,,,80\n4,,7,\n');
    const c = '0001-sentinels.yaml';
    expect(sorted(built.lineage)).toEqual([
      cell(c, 1, '1', 'a', '-99', null),
      cell(c, 1, '3', 'a', '-99', null),
      cell(c, 2, '3', 'b', '-99', null),
      cell(c, 3, '2', 'c', '120', null),
      cell(c, 3, '4', 'c', '101', null),
    ]);
  });

  it('missing compares listed values exactly, so 1.5 in the list never blanks the whole number 2', async () => {
    // One list of sentinels shared by several columns: 1.5 is a code of some other column.
    // In the integer column score only -99 is listed; 2 and 3 are real scores.
    const built = await build('id,score\n1,2\n2,3\n3,-99\n', {
      '0001-sentinels.yaml': 'reason: Sentinel codes\nsteps:\n  - missing: { column: score, values: [-99, 1.5] }\n',
    });
    expect(built.result.code, built.result.stderr).toBe(0);
    expect(built.csv).toBe('id,score\n1,2\n2,3\n3,\n');
    expect(built.lineage).toEqual([cell('0001-sentinels.yaml', 1, '3', 'score', '-99', null)]);
  });
});

describe('convert', () => {
  it('convert copies a text column into a new integer column that arithmetic can use', async () => {
    // visits holds "n/a", so it arrives as text. Step 1 makes "n/a" missing; step 2 converts into
    // visit_count; step 3 adds 1 (12 + 1 = 13, 3 + 1 = 4), which works only on a number.
    const built = await build('id,visits\n1,12\n2,3\n3,n/a\n4,\n', {
      '0001-visits.yaml': [
        'reason: Visits as a count',
        'steps:',
        '  - missing: { column: visits, values: [n/a] }',
        '  - convert: { column: visits, to: integer, as: visit_count }',
        '  - derive: { next_count: "visit_count + 1" }',
        '',
      ].join('\n'),
    });
    expect(built.result.code, built.result.stderr).toBe(0);
    expect(built.csv).toBe('id,visits,visit_count,next_count\n1,12,12,13\n2,3,3,4\n3,,,\n4,,,\n');
    const c = '0001-visits.yaml';
    expect(cells(built.lineage)).toEqual([cell(c, 1, '3', 'visits', 'n/a', null)]);
    expect(events(built.lineage)).toEqual([
      { step: 2, column: 'visit_count', change: 'column-added' },
      { step: 3, column: 'next_count', change: 'column-added' },
    ]);
  });

  it('convert fails with CONVERSION_FAILED listing the values that do not fit', async () => {
    const yaml = [
      'reason: Visits as a count', // line 1
      'steps:', // line 2
      '  - convert: { column: visits, to: integer, as: visit_count }', // line 3
      '',
    ].join('\n');
    const root = tempDir();
    roots.push(root);
    writeFiles(root, { 'errata.yaml': CONFIG, 'raw/t/delivery.csv': 'id,visits\n1,12\n2,twelve\n3,3\n4,n/a\n', 'corrections/t/0001-visits.yaml': yaml });
    const error = await buildProject({ tree: new WorkingTree(root), workDir: path.join(root, '.errata', 'tmp') }).then(
      (b) => {
        b.session.close();
        return null;
      },
      (e: unknown) => e,
    );
    expect(error).toBeInstanceOf(ErrataError);
    const e = error as ErrataError;
    expect(e.code).toBe('CONVERSION_FAILED');
    expect(e.data.file).toBe('corrections/t/0001-visits.yaml');
    expect(e.data.line).toBe(3);
    expect(e.data.values).toEqual(['twelve', 'n/a']);
    expect(e.message).toContain('"twelve"');
    expect(e.message).toContain('"n/a"');

    const cli = await build('id,visits\n1,12\n2,twelve\n3,3\n4,n/a\n', { '0001-visits.yaml': yaml });
    expect(cli.result.code).toBe(2);
    expect(cli.result.stderr).toContain('corrections/t/0001-visits.yaml:3');
    expect(cli.result.stderr).toContain('twelve');
    expect(cli.csv).toBeNull();
  });

  it('convert with invalid: missing records each value that could not be converted', async () => {
    const built = await build('id,visits\n1,12\n2,twelve\n3,3\n4,n/a\n', {
      '0001-visits.yaml': 'reason: Visits as a count\nsteps:\n  - convert: { column: visits, to: integer, as: visit_count, invalid: missing }\n',
    });
    expect(built.result.code, built.result.stderr).toBe(0);
    expect(built.csv).toBe('id,visits,visit_count\n1,12,12\n2,twelve,\n3,3,3\n4,n/a,\n');
    const c = '0001-visits.yaml';
    expect(cells(built.lineage)).toEqual([cell(c, 1, '2', 'visit_count', 'twelve', null), cell(c, 1, '4', 'visit_count', 'n/a', null)]);
    expect(events(built.lineage)).toEqual([{ step: 1, column: 'visit_count', change: 'column-added' }]);
  });
});

describe('key columns', () => {
  it('a step that would change a key column is refused with the file and line of the step', async () => {
    const root = tempDir();
    roots.push(root);
    writeFiles(root, {
      'errata.yaml': CONFIG,
      'raw/t/delivery.csv': 'id,weight\n1,70.5\n2,64.5\n',
      'corrections/t/0001-renumber.yaml': 'reason: Renumber\nsteps:\n  - drop: weight\n  - set: { id: "id + 100" }\n',
    });
    const error = await buildProject({ tree: new WorkingTree(root), workDir: path.join(root, '.errata', 'tmp') }).then(
      (b) => {
        b.session.close();
        return null;
      },
      (e: unknown) => e,
    );
    expect(error).toBeInstanceOf(ErrataError);
    expect((error as ErrataError).code).toBe('CORRECTION_FAILED');
    expect((error as ErrataError).data).toMatchObject({ file: 'corrections/t/0001-renumber.yaml', line: 4, step: 2 });
    expect((error as ErrataError).message).toContain('key column');
  });
});

describe('rename, drop, delete and derive', () => {
  let built: Built;
  const c = '0001-tidy.yaml';

  beforeAll(async () => {
    built = await build('id,site,legacy,weight,height\n1,N,x1,72.5,180\n2,S,x2,50.5,160\n3,N,x3,61.5,170\n', {
      [c]: [
        'reason: Tidy the table for analysis',
        'steps:',
        '  - rename: { site: centre }',
        '  - set: { centre: "\'North\'" }',
        "    where: centre = 'N'",
        '  - drop: legacy',
        '  - delete: { where: "id = 2", reason: withdrew consent }',
        '  - derive: { bmi: "round(weight / ((height / 100) ^ 2), 1)" }',
        '',
      ].join('\n'),
    });
    expect(built.result.code, built.result.stderr).toBe(0);
  });

  it('rename gives a column a new name that later steps use', () => {
    expect(built.csv?.split('\n')[0]).toBe('id,centre,weight,height,bmi');
    expect(cells(built.lineage)).toEqual([cell(c, 2, '1', 'centre', 'N', 'North'), cell(c, 2, '3', 'centre', 'N', 'North')]);
    expect(events(built.lineage)).toContainEqual({ step: 1, column: 'site', change: 'column-renamed' });
    const renamed = built.lineage.find((r) => r.change === 'column-renamed');
    expect([renamed?.old, renamed?.new]).toEqual(['site', 'centre']);
  });

  it('drop removes a column and records it', () => {
    expect(built.csv).not.toContain('legacy');
    expect(built.csv).not.toContain('x1');
    expect(events(built.lineage)).toContainEqual({ step: 3, column: 'legacy', change: 'column-dropped' });
  });

  it('delete removes the rows its condition selects and records each row whole', () => {
    const deleted = built.lineage.filter((r) => r.change === 'row-deleted');
    expect(deleted).toHaveLength(1);
    expect(deleted[0].key).toBe('2');
    expect(deleted[0].step).toBe(4);
    // The row as it stood before the delete: already renamed and without the dropped column.
    expect(JSON.parse(deleted[0].old ?? 'null')).toEqual({ id: 2, centre: 'S', weight: 50.5, height: 160 });
  });

  it('derive adds a column computed from each row', () => {
    // bmi = weight / (height in metres)²:
    //   row 1: 72.5 / 1.80² = 72.5 / 3.24 = 22.376… → 22.4
    //   row 3: 61.5 / 1.70² = 61.5 / 2.89 = 21.280… → 21.3
    expect(built.csv).toBe('id,centre,weight,height,bmi\n1,North,72.5,180,22.4\n3,North,61.5,170,21.3\n');
    expect(events(built.lineage)).toContainEqual({ step: 5, column: 'bmi', change: 'column-added' });
    expect(built.lineage).toHaveLength(2 + 1 + 1 + 1 + 1);
  });
});
