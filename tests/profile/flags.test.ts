import { describe, expect, it } from 'vitest';
import { columnOf, profileFolder, profileValues } from './profile-fixtures.js';

/** Every invented table below has an `id` key; flags name rows by it. */

describe('numbers stored as text', () => {
  it('names the values that keep a column of numbers as text, with their rows', async () => {
    const c = await profileValues('sbp', ['120', '135', 'n/a', '140', '<90', '128', 'n/a']);
    expect(c.type).toBe('string');
    expect(c.flags).toEqual([
      expect.objectContaining({
        kind: 'number-as-text',
        type: 'integer',
        blocking: [
          { value: 'n/a', count: 2 },
          { value: '<90', count: 1 },
        ],
        count: 3,
        keys: ['3', '5', '7'],
      }),
    ]);
  });

  it('says which numbers would print differently when every value is a number', async () => {
    // "1.50" and "3.00" would print as 1.5 and 3; "2.25" and "4" print as delivered.
    const c = await profileValues('dose', ['1.50', '2.25', '3.00', '4']);
    expect(c.flags).toEqual([
      expect.objectContaining({ kind: 'number-as-text', type: 'number', blocking: [{ value: '1.50', count: 1 }, { value: '3.00', count: 1 }], count: 2 }),
    ]);
  });

  it('leaves codes with leading zeros and mostly-text columns alone', async () => {
    expect((await profileValues('site', ['001', '002', '001', '010'])).flags).toEqual([]);
    expect((await profileValues('note', ['ok', 'late', 'ok', '7'])).flags).toEqual([]);
  });
});

describe('likely sentinel codes', () => {
  it('999 far outside the other blood pressures', async () => {
    // Others: 110 118 121 125 130 134 142 (n = 7): q1 h = 2.5 → 118 + 0.5·3 = 119.5,
    // q3 h = 6.5 → 130 + 0.5·4 = 132; IQR 12.5; fence 132 + 37.5 = 169.5 < 999, gap 999 − 142 ≥ 12.5.
    const c = await profileValues('sbp', ['121', '999', '110', '134', '125', '142', '118', '130', '999']);
    expect(c.flags).toEqual([expect.objectContaining({ kind: 'sentinel', value: '999', count: 2, reason: 'far-out', keys: ['2', '9'] })]);
  });

  it('99 among ages is not far enough out to be flagged', async () => {
    // Others: 23 35 41 52 64 77 88 (88 is a candidate and left out too): 23 35 41 52 64 77, n = 6:
    // q1 h = 2.25 → 35 + 0.25·6 = 36.5, q3 h = 4.75 → 52 + 0.75·12 = 61; fence 61 + 3·24.5 = 134.5 > 99.
    const c = await profileValues('age', ['23', '35', '41', '52', '64', '77', '88', '99']);
    expect(c.flags).toEqual([]);
  });

  it('the fence uses type-7 quartiles of the other values, counting repeats', async () => {
    // Others 0 10 10 20 60 (n = 5): q1 h = 2 → 10, q3 h = 4 → 20, IQR 10, fence 20 + 30 = 50.
    // 88 > 50 and 88 − 60 = 28 ≥ 10: flagged. (Type 6 would give q1 5, q3 40 and a fence of 145.)
    const c = await profileValues('x', ['0', '10', '10', '20', '60', '88']);
    expect(c.flags.map((f) => f.kind === 'sentinel' && [f.value, f.reason])).toEqual([['88', 'far-out']]);
  });

  it('-9 where every other value is zero or more', async () => {
    const c = await profileValues('children', ['0', '2', '1', '-9', '3', '0', '1']);
    expect(c.flags).toEqual([expect.objectContaining({ kind: 'sentinel', value: '-9', count: 1, reason: 'negative', keys: ['4'] })]);
  });

  it('9 apart from a small code set, but not at the end of a 1–9 scale', async () => {
    const smoker = await profileValues('smoker', ['1', '2', '3', '9', '1', '2', '9']);
    expect(smoker.flags).toEqual([expect.objectContaining({ kind: 'sentinel', value: '9', count: 2, reason: 'code-gap' })]);
    const scale = await profileValues('pain', ['1', '2', '3', '4', '5', '6', '7', '8', '9', '5']);
    expect(scale.flags).toEqual([]);
  });

  it('in a text column of numbers too', async () => {
    const c = await profileValues('cigs', ['0', '10', 'ten', '5', '-99', '20']);
    expect(c.flags.map((f) => f.kind)).toEqual(['number-as-text', 'sentinel']);
    expect(c.flags[1]).toMatchObject({ value: '-99', reason: 'negative', keys: ['5'] });
  });
});

describe('flags that read the codebook', () => {
  const project = {
    'errata.yaml': 'tables:\n  visits:\n    raw: raw/visits.csv\n    key: id\n',
    'codebook/visits.yaml': [
      'fields:',
      '  - name: id',
      '    type: integer',
      '  - name: smoker',
      '    type: integer',
      '    constraints: { enum: [1, 2, 3] }',
      '    labels: { 1: never, 2: former, 3: current, 9: not asked }',
      '  - name: age',
      '    type: integer',
      '    missingValues: ["-99"]',
      '    constraints: { minimum: 18, maximum: 90 }',
      '  - name: visit',
      '    type: date',
      '    constraints: { minimum: "2024-01-01" }',
      '',
    ].join('\n'),
    'raw/visits.csv': [
      'id,smoker,age,visit,answer',
      '1,1,34,2024-02-01,Yes',
      '2,2,-99,2024-02-03,yes ',
      '3,4,17,2023-12-30,No',
      '4,9,95,2024-03-01,YES',
      '5,4,52,2024-03-02,no',
      '6,3,-99,2024-03-05,No',
      '',
    ].join('\n'),
  };

  it('values outside the enum, the minimum and the maximum; declared missing codes are not values', async () => {
    const { tables } = await profileFolder(project);
    const raw = tables[0].raw!;
    // smoker: 4 (rows 3 and 5) and 9 (row 4) are not in the enum; 9 has a label but is still no code.
    expect(columnOf(raw, 'smoker').flags).toEqual([
      expect.objectContaining({ kind: 'outside-codebook', rule: 'enum', limit: null, values: [{ value: '4', count: 2 }, { value: '9', count: 1 }], count: 3, keys: ['3', '4', '5'] }),
    ]);
    // age: -99 is declared missing, so it is a sentinel still present, and breaks neither bound.
    const age = columnOf(raw, 'age').flags;
    expect(age).toEqual([
      expect.objectContaining({ kind: 'sentinel', value: '-99', count: 2, reason: 'declared-missing', keys: ['2', '6'] }),
      expect.objectContaining({ kind: 'outside-codebook', rule: 'minimum', limit: '18', values: [{ value: '17', count: 1 }], keys: ['3'] }),
      expect.objectContaining({ kind: 'outside-codebook', rule: 'maximum', limit: '90', values: [{ value: '95', count: 1 }], keys: ['4'] }),
    ]);
    expect(columnOf(raw, 'visit').flags).toEqual([
      expect.objectContaining({ kind: 'outside-codebook', rule: 'minimum', limit: '2024-01-01', values: [{ value: '2023-12-30', count: 1 }] }),
    ]);
  });

  it('a code the codebook labels is not taken for a sentinel', async () => {
    // smoker's 9 stands apart from 1–4, but the codebook's labels document it ("not asked").
    const { tables } = await profileFolder(project);
    expect(columnOf(tables[0].raw!, 'smoker').flags.filter((f) => f.kind === 'sentinel')).toEqual([]);
  });

  it('spellings of one code that differ in case or white space', async () => {
    const { tables } = await profileFolder(project);
    expect(columnOf(tables[0].raw!, 'answer').flags).toEqual([
      expect.objectContaining({ kind: 'code-variants', spellings: [{ value: 'No', count: 2 }, { value: 'no', count: 1 }] }),
      expect.objectContaining({ kind: 'code-variants', spellings: [{ value: 'YES', count: 1 }, { value: 'Yes', count: 1 }, { value: 'yes ', count: 1 }] }),
    ]);
  });
});
