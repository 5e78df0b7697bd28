import { describe, expect, it } from 'vitest';
import type { TableCheck } from '../../src/check/types.js';
import { checkFailed, checkJsonChunks, renderCheckJson, renderCheckText } from '../../src/render/check.js';

function table(name: string, discrepancies: TableCheck['discrepancies']): TableCheck {
  return { table: name, source: 'clean', keyColumns: ['pid'], rows: 10, discrepancies };
}

const visits = table('visits', [
  { key: '2', column: 'age', value: '999', rule: 'maximum', severity: 'error', message: 'above the maximum 99' },
  { key: '3', column: 'age', value: '150', rule: 'maximum', severity: 'error', message: 'above the maximum 99' },
  { key: '4', column: 'dbp, sbp', value: 'dbp=130, sbp=125', rule: 'bp', severity: 'warning', message: 'Diastolic below systolic' },
]);
const labs = table('labs', [{ key: '7', column: 'ldl', value: 'high', rule: 'type', severity: 'error', message: 'not a number' }]);

describe('rendering a check', () => {
  it('JSON holds exactly the documented keys in order, and names columns table.column across tables', () => {
    const one = JSON.parse(renderCheckJson([visits]));
    expect(Object.keys(one)).toEqual(['discrepancies']);
    expect(one.discrepancies.map((d: object) => Object.keys(d))).toEqual(Array(3).fill(['key', 'column', 'value', 'rule', 'severity', 'message']));
    const two = JSON.parse(renderCheckJson([visits, labs]));
    expect(two.discrepancies.map((d: { column: string }) => d.column)).toEqual(['visits.age', 'visits.age', 'visits.dbp, visits.sbp', 'labs.ldl']);
    expect(renderCheckJson([table('visits', [])])).toBe('{"discrepancies":[]}\n');
  });

  it('JSON written in pieces joins to the same text', () => {
    expect([...checkJsonChunks([visits, labs], 50)].join('')).toBe(renderCheckJson([visits, labs]));
    expect([...checkJsonChunks([visits, labs], 50)].length).toBeGreaterThan(2);
  });

  it('text groups by rule with counts and shows at most the limit per rule', () => {
    const text = renderCheckText([visits], undefined, { limit: 1 });
    expect(text).toBe(
      [
        'visits (clean, 10 rows): 2 errors, 1 warning',
        '',
        '  maximum: 2 errors',
        '    pid=2  age  999  above the maximum 99',
        '    … and 1 more (--format json lists them all)',
        '',
        '  bp: 1 warning',
        '    pid=4  dbp, sbp  dbp=130, sbp=125  Diastolic below systolic',
        '',
      ].join('\n'),
    );
    expect(renderCheckText([table('visits', [])])).toBe('visits (clean, 10 rows): no discrepancies\n');
  });

  it('fails only when some discrepancy is an error', () => {
    expect(checkFailed([visits])).toBe(true);
    expect(checkFailed([table('visits', [visits.discrepancies[2]])])).toBe(false);
    expect(checkFailed([])).toBe(false);
  });
});
