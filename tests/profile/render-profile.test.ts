import { describe, expect, it } from 'vitest';
import { compareProfiles } from '../../src/profile/compare-profiles.js';
import type { ColumnProfile, Flag, TableProfile } from '../../src/profile/types.js';
import { formatNumber, renderProfileJson, renderProfileText } from '../../src/render/profile.js';

/** The documented `profile --format json` column keys, in order (DESIGN.md, command line contract). */
const DOCUMENTED_KEYS = ['name', 'type', 'n', 'missing', 'distinct', 'mean', 'sd', 'min', 'q1', 'median', 'q3', 'max', 'top'];

function column(name: string, fields: Partial<ColumnProfile> = {}): ColumnProfile {
  return {
    name,
    type: 'string',
    n: 3,
    missing: 0,
    distinct: 2,
    mean: null,
    sd: null,
    min: null,
    q1: null,
    median: null,
    q3: null,
    max: null,
    top: [{ value: 'a', count: 2 }],
    histogram: null,
    extremes: null,
    frequencies: null,
    flags: [],
    ...fields,
  };
}

function table(name: string, columns: ColumnProfile[], source: TableProfile['source'] = 'clean'): TableProfile {
  return { table: name, source, rows: 3, key: ['id'], columns };
}

const sentinel = (value: string): Flag => ({ kind: 'sentinel', message: '', value, count: 1, reason: 'far-out', keys: ['1'] });

describe('profile JSON', () => {
  it('starts every column with the documented keys in order, then the additions, and nulls where a statistic does not apply', () => {
    const printed = renderProfileJson([table('visits', [column('site'), column('age', { type: 'integer', mean: 40, sd: 2, min: 38, q1: 39, median: 40, q3: 41, max: 42 })])]);
    const parsed = JSON.parse(printed);
    expect(Object.keys(parsed)).toEqual(['columns', 'tables']);
    for (const c of parsed.columns) {
      expect(Object.keys(c)).toEqual([...DOCUMENTED_KEYS, 'histogram', 'extremes', 'frequencies', 'flags', 'table']);
      expect(Object.keys(c.top[0])).toEqual(['value', 'count']);
    }
    expect(parsed.columns[0]).toMatchObject({ name: 'site', mean: null, sd: null, min: null, q1: null, median: null, q3: null, max: null });
    expect(parsed.columns[1]).toMatchObject({ name: 'age', mean: 40, q3: 41 });
  });

  it('prefixes column names with their table when several tables are profiled, as the combined diff summary does', () => {
    const parsed = JSON.parse(renderProfileJson([table('visits', [column('id')]), table('labs', [column('id')])]));
    expect(parsed.columns.map((c: { name: string; table: string }) => [c.name, c.table])).toEqual([
      ['visits.id', 'visits'],
      ['labs.id', 'labs'],
    ]);
  });
});

describe('profile text', () => {
  it('shows numbers to six significant digits, more when the whole part needs them', () => {
    expect(formatNumber(41.234567)).toBe('41.2346');
    expect(formatNumber(10000000.2)).toBe('10000000.2');
    expect(formatNumber(0.1)).toBe('0.1');
    expect(formatNumber(128)).toBe('128');
    expect(formatNumber(null)).toBe('–');
  });

  it('writes a frequency table with the missing row last', () => {
    const text = renderProfileText([
      table('visits', [
        column('smoker', {
          frequencies: [
            { value: 'no', label: 'never smoked', count: 1, percent: 33.33, cumulative: 33.33 },
            { value: 'yes', label: null, count: 2, percent: 66.67, cumulative: 100 },
            { value: null, label: null, count: 0, percent: 0, cumulative: 100 },
          ],
        }),
      ]),
    ]);
    const rows = text.split('\n').filter((l) => /^\s{4}\S/.test(l));
    expect(rows.map((r) => r.trim().split(/\s{2,}/))).toEqual([
      ['value', 'label', 'count', 'percent', 'cumulative'],
      ['no', 'never smoked', '1', '33.3%', '33.3%'],
      ['yes', '2', '66.7%', '100.0%'],
      ['(missing)', '0', '0.0%', '100.0%'],
    ]);
  });
});

describe('comparing raw and clean profiles', () => {
  it('pairs a renamed column with its raw name and sorts flags into cleared and new', () => {
    const raw = table('visits', [column('id'), column('wt', { flags: [sentinel('999')] }), column('legacy')], 'raw');
    const clean = table('visits', [column('id'), column('weight_kg', { flags: [sentinel('-9')] })]);
    const compared = compareProfiles(raw, clean, { weight_kg: 'wt' });
    expect(compared.columns.map((c) => [c.name, c.rawName, Boolean(c.raw), Boolean(c.clean)])).toEqual([
      ['id', null, true, true],
      ['weight_kg', 'wt', true, true],
      ['legacy', null, true, false],
    ]);
    expect(compared.columns[1].resolved).toEqual([sentinel('999')]);
    expect(compared.columns[1].introduced).toEqual([sentinel('-9')]);
  });

  it('keeps a typed copy apart from its original when the original is still there', () => {
    const raw = table('visits', [column('cigs')], 'raw');
    const clean = table('visits', [column('cigs'), column('cigs_per_day')]);
    const compared = compareProfiles(raw, clean, { cigs_per_day: 'cigs' });
    expect(compared.columns.map((c) => [c.name, c.rawName, Boolean(c.raw)])).toEqual([
      ['cigs', null, true],
      ['cigs_per_day', null, false],
    ]);
  });
});
