import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { neutraliseFormula, restoreFormula } from '../../src/engine/formula-guard.js';
import { Session } from '../../src/engine/session.js';
import { neutraliseFormulaSql } from '../../src/engine/value-text.js';

/**
 * The clean CSV is written by the engine, so the spreadsheet formula guard exists twice: in
 * TypeScript (formula-guard.ts, used for query sheets and the audit log) and in SQL (value-text.ts,
 * used by the CSV writer). Both must give the same text for every value. The trigger characters are
 * those of OWASP's "CSV Injection" guidance: = + - @ tab and carriage return.
 */

let session: Session;
beforeAll(async () => {
  session = await Session.open();
});
afterAll(() => session.close());

const VALUES = [
  '=1+1',
  '=HYPERLINK("http://example.org","x")',
  '+1+1',
  '-1+1',
  '@SUM(A1:A2)',
  '\tx',
  '\rx',
  "'already",
  "''twice",
  '-99',
  '+1.5',
  '-1e3',
  '1e-3',
  '.5',
  '-.5',
  '5.',
  '-',
  '+',
  '=',
  '@',
  "'",
  '-1e',
  '--1',
  '1-1',
  'plain',
  'x=1',
  ' =1',
  '',
  'α=β',
  '=α',
  '-0',
  '+-1',
  '-99\n',
  '12 ',
];

describe('the SQL formula guard', () => {
  it('gives the same text as the TypeScript guard on every value', async () => {
    const rows: string[] = [];
    for (const value of VALUES) rows.push((await session.one<{ v: string }>(`SELECT ${neutraliseFormulaSql('$1::VARCHAR')} AS v`, [value])).v);
    expect(rows).toEqual(VALUES.map(neutraliseFormula));
  });

  it('prefixes formulas with one apostrophe and leaves numbers alone (OWASP CSV Injection)', async () => {
    const one = async (value: string) => (await session.one<{ v: string }>(`SELECT ${neutraliseFormulaSql('$1::VARCHAR')} AS v`, [value])).v;
    expect(await one('=1+1')).toBe("'=1+1");
    expect(await one('@SUM(A1)')).toBe("'@SUM(A1)");
    expect(await one('-99')).toBe('-99');
    expect(await one("'x")).toBe("''x");
  });

  it('keeps missing values missing', async () => {
    expect(await session.one(`SELECT ${neutraliseFormulaSql('CAST(NULL AS VARCHAR)')} AS v`)).toEqual({ v: null });
  });

  it('is undone by dropping one leading apostrophe', () => {
    for (const value of VALUES) expect(restoreFormula(neutraliseFormula(value))).toBe(value);
  });
});
