import { rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { errata, makeProject, removeDir } from '../helpers/project.js';

/**
 * A small study: two 999s for "not measured" in sbp, spellings of yes/no in smoker, a weight column
 * delivered as wt. Corrections turn 999 into missing, recode the spellings and rename wt. Every figure
 * expected below is worked out by hand from these rows.
 */
const DELIVERY = ['id,sbp,smoker,wt', '1,120,yes,70.5', '2,999,Yes,81.2', '3,135,no,64', '4,128,yes ,77.1', '5,999,no,90.3', '6,141,No,59.9', '7,118,yes,72.4', ''].join('\n');

const FILES = {
  'errata.yaml': 'tables:\n  visits:\n    raw: raw/visits\n    key: id\n',
  'codebook/visits.yaml': [
    'fields:',
    '  - name: id',
    '    type: integer',
    '  - name: sbp',
    '    type: integer',
    '    constraints: { minimum: 70, maximum: 250 }',
    '  - name: smoker',
    '    type: string',
    '    constraints: { enum: ["yes", "no"] }',
    '',
  ].join('\n'),
  'raw/visits/2026-01-delivery.csv': DELIVERY,
  'corrections/visits/0001-not-measured.yaml': 'reason: 999 means not measured\nsteps:\n  - missing: { columns: [sbp], values: [999] }\n',
  'corrections/visits/0002-spellings.yaml': 'reason: one spelling per answer\nsteps:\n  - recode: { column: smoker, map: { "Yes": "yes", "yes ": "yes", "No": "no" } }\n',
  'corrections/visits/0003-weight-name.yaml': 'reason: analysis name\nsteps:\n  - rename: { wt: weight_kg }\n',
};

const DOCUMENTED_KEYS = ['name', 'type', 'n', 'missing', 'distinct', 'mean', 'sd', 'min', 'q1', 'median', 'q3', 'max', 'top'];

describe('errata profile', () => {
  let root: string;
  beforeAll(async () => {
    root = await makeProject(FILES);
  });
  afterAll(() => removeDir(root));

  const json = async (args: string[]) => {
    const result = await errata(root, ['profile', ...args, '--format', 'json']);
    expect(result.stderr).toBe('');
    expect(result.code).toBe(0);
    return JSON.parse(result.stdout);
  };

  it('prints one JSON object whose columns start with the documented keys in the documented order', async () => {
    const profile = await json([]);
    expect(Object.keys(profile)[0]).toBe('columns');
    expect(profile.columns.map((c: { name: string }) => c.name)).toEqual(['id', 'sbp', 'smoker', 'weight_kg']);
    for (const column of profile.columns) expect(Object.keys(column).slice(0, DOCUMENTED_KEYS.length)).toEqual(DOCUMENTED_KEYS);
  });

  it('profiles the clean data by default, with figures worked by hand', async () => {
    const [, sbp, smoker] = (await json([])).columns;
    // sbp after 999 → missing: 120 135 128 141 118. Mean 642 / 5 = 128.4; deviations −8.4 6.6 −0.4
    // 12.6 −10.4, squares sum 70.56 + 43.56 + 0.16 + 158.76 + 108.16 = 381.2, sd √(381.2 / 4) = √95.3.
    // Sorted 118 120 128 135 141: type-7 quartiles on ranks 2, 3, 4 → 120, 128, 135.
    expect(sbp).toMatchObject({ type: 'integer', n: 5, missing: 2, distinct: 5, min: 118, q1: 120, median: 128, q3: 135, max: 141, flags: [] });
    expect(sbp.mean).toBeCloseTo(128.4, 12);
    expect(sbp.sd).toBeCloseTo(Math.sqrt(95.3), 12);
    // smoker after the recode: yes in rows 1 2 4 7, no in rows 3 5 6. 3/7 = 42.857…%, 4/7 = 57.142…%.
    expect(smoker).toMatchObject({ type: 'string', n: 7, missing: 0, distinct: 2, mean: null, sd: null, min: null, q1: null, median: null, q3: null, max: null, flags: [] });
    expect(smoker.top).toEqual([
      { value: 'yes', count: 4 },
      { value: 'no', count: 3 },
    ]);
    expect(smoker.frequencies).toEqual([
      { value: 'no', label: null, count: 3, percent: 42.86, cumulative: 42.86 },
      { value: 'yes', label: null, count: 4, percent: 57.14, cumulative: 100 },
      { value: null, label: null, count: 0, percent: 0, cumulative: 100 },
    ]);
  });

  it('--raw profiles the delivery as loaded and typed, with its flags', async () => {
    const [, sbp, smoker, wt] = (await json(['--raw'])).columns;
    // 120 + 999 + 135 + 128 + 999 + 141 + 118 = 2640 over 7 rows.
    expect(sbp).toMatchObject({ n: 7, missing: 0, distinct: 6, min: 118, max: 999 });
    expect(sbp.mean).toBeCloseTo(2640 / 7, 12);
    // Without the 999s: 118 120 128 135 141, q1 120, q3 135, IQR 15, fence 180; 999 is far beyond.
    expect(sbp.flags.map((f: { kind: string; value?: string; rule?: string }) => [f.kind, f.value ?? f.rule])).toEqual([
      ['sentinel', '999'],
      ['outside-codebook', 'maximum'],
    ]);
    expect(sbp.extremes.highest.slice(0, 2)).toEqual([
      { key: '2', value: '999' },
      { key: '5', value: '999' },
    ]);
    expect(smoker.flags.map((f: { kind: string }) => f.kind)).toEqual(['outside-codebook', 'code-variants', 'code-variants']);
    expect(wt.name).toBe('wt');
  });

  it('--compare pairs raw and clean variables, following the rename, and lists the flags that cleared', async () => {
    const compared = await json(['--compare']);
    const names = compared.columns.map((c: { name: string }) => c.name);
    expect(names).toEqual(['id', 'sbp', 'smoker', 'weight_kg']);
    const [, sbp, smoker, weight] = compared.columns;
    expect(Object.keys(sbp).slice(0, 3)).toEqual(['name', 'raw', 'clean']);
    expect([sbp.raw.max, sbp.clean.max, sbp.raw.missing, sbp.clean.missing]).toEqual([999, 141, 0, 2]);
    expect(sbp.resolved.map((f: { kind: string }) => f.kind)).toEqual(['sentinel', 'outside-codebook']);
    expect(smoker.resolved).toHaveLength(3);
    expect(smoker.introduced).toEqual([]);
    expect(weight.rawName).toBe('wt');
    expect(weight.raw.mean).toBe(weight.clean.mean);
  });

  it('--compare as text: one line per variable, raw → clean where they differ', async () => {
    const result = await errata(root, ['profile', '--compare']);
    expect(result.code).toBe(0);
    const lines = result.stdout.split('\n');
    const sbp = lines.find((l) => l.trimStart().startsWith('sbp'))!;
    expect(sbp).toMatch(/7 → 5\s+0 → 2\s+6 → 5\s+377\.143 → 128\.4\s+118\s+999 → 141\s+cleared: likely sentinel 999; outside the codebook \(maximum\)/);
    expect(lines.find((l) => l.trimStart().startsWith('weight_kg'))).toContain('weight_kg (from wt)');
  });

  it('text output shows counts, statistics, the frequency table and the flags', async () => {
    const clean = await errata(root, ['profile']);
    expect(clean.stdout).toContain('visits · clean · 7 rows · 4 variables · key id');
    expect(clean.stdout).toMatch(/mean 128\.4 {3}sd 9\.76217 {3}min 118 {3}q1 120 {3}median 128 {3}q3 135 {3}max 141/);
    expect(clean.stdout).toMatch(/no\s+3\s+42\.9%\s+42\.9%/);
    expect(clean.stdout).toContain('no flags');
    const raw = await errata(root, ['profile', '--raw']);
    expect(raw.stdout).toContain('! likely sentinel 999: 999 (2 rows) lies far outside the other values (118 to 141)');
    expect(raw.stdout).toContain('[2, 5]');
  });

  it('--rev profiles the project as committed, not the working tree', async () => {
    const extra = path.join(root, 'corrections/visits/0004-drop-row.yaml');
    writeFileSync(extra, 'reason: test record\nsteps:\n  - delete: { where: "id = 7", reason: test record }\n');
    try {
      expect((await json([])).columns[0].n).toBe(6);
      expect((await json(['--rev', 'HEAD'])).columns[0].n).toBe(7);
    } finally {
      rmSync(extra);
    }
  });

  it('--files profiles a file with no project, naming rows by data row number without --key', async () => {
    const file = path.join(root, 'raw/visits/2026-01-delivery.csv');
    const result = await errata(root, ['profile', '--files', file, '--format', 'json']);
    expect(result.code).toBe(0);
    const sbp = JSON.parse(result.stdout).columns.find((c: { name: string }) => c.name === 'sbp');
    expect(sbp.extremes.highest[0]).toEqual({ key: '2', value: '999' });
    const text = await errata(root, ['profile', '--files', file, '--key', 'id']);
    expect(text.stdout).toContain('2026-01-delivery.csv · file · 7 rows · 4 variables · key id');
  });

  it('--files without --key names the rows of a number-as-text column by data row number', async () => {
    const file = path.join(root, 'counts.csv');
    writeFileSync(file, 'visits,site\n3,a\nn/a,b\n4,c\nn/a,d\n');
    try {
      const result = await errata(root, ['profile', '--files', file, '--format', 'json']);
      expect(result.stderr).toBe('');
      expect(result.code).toBe(0);
      const visits = JSON.parse(result.stdout).columns.find((c: { name: string }) => c.name === 'visits');
      // By hand: "n/a" stands in data rows 2 and 4, counted from the first row after the header.
      expect(visits.flags[0]).toMatchObject({ kind: 'number-as-text', count: 2, keys: ['2', '4'] });
    } finally {
      rmSync(file);
    }
  });

  it('--files with --codebook applies its types, missing values and limits, and takes its primaryKey', async () => {
    const file = path.join(root, 'coded.csv');
    const codebook = path.join(root, 'coded.yaml');
    writeFileSync(file, 'pid,smoker,score\nA1,1,3.5\nA2,2,-9\nA3,7,4\nA4,-9,5\n');
    writeFileSync(codebook, 'primaryKey: pid\nfields:\n  - { name: pid, type: string }\n  - { name: smoker, type: integer, constraints: { enum: [1, 2] }, missingValues: ["-9"] }\n  - { name: score, type: number, constraints: { minimum: 0 } }\n');
    try {
      const result = await errata(root, ['profile', '--files', file, '--codebook', codebook, '--format', 'json']);
      expect(result.stderr).toBe('');
      expect(result.code).toBe(0);
      const columns = JSON.parse(result.stdout).columns as Array<{ name: string; type: string; flags: Array<Record<string, unknown>> }>;
      const smoker = columns.find((c) => c.name === 'smoker')!;
      const score = columns.find((c) => c.name === 'score')!;
      // Table Schema meaning: 7 is not in the enum [1, 2] (row A3); "-9" is declared missing yet held (row A4);
      // score −9 is below the minimum 0 (row A2).
      expect(smoker.type).toBe('integer');
      expect(smoker.flags).toEqual(expect.arrayContaining([
        expect.objectContaining({ kind: 'outside-codebook', count: 1, keys: ['A3'] }),
        expect.objectContaining({ kind: 'sentinel', reason: 'declared-missing', count: 1, keys: ['A4'] }),
      ]));
      expect(score.type).toBe('number');
      expect(score.flags).toEqual(expect.arrayContaining([expect.objectContaining({ kind: 'outside-codebook', count: 1, keys: ['A2'] })]));
    } finally {
      rmSync(file);
      rmSync(codebook);
    }
  });

  it('refuses options that do not go together, with exit code 2', async () => {
    for (const args of [['--raw', '--compare'], ['--files', 'x.csv', '--raw'], ['--key', 'id']]) {
      const result = await errata(root, ['profile', ...args]);
      expect(result.code).toBe(2);
      expect(result.stderr).toContain('error');
    }
  });
});
