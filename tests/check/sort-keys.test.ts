import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { MAY_BE_NUMBER } from '../../src/check/check-table.js';
import { Session } from '../../src/engine/session.js';

/**
 * Keys held as text are listed by number first. The check skips the cast for text that cannot be a
 * number; the oracle here is DuckDB's own TRY_CAST to DOUBLE (an independent library), which the
 * guarded form must agree with on every text, the awkward ones included.
 */
describe('the guard before reading a key as a number', () => {
  let session: Session;
  beforeAll(async () => {
    session = await Session.open();
  });
  afterAll(() => session.close());

  const texts = ['12', '007', ' 12', '12 ', '+5', '-3.5', '.5', '5.', '1e3', '-1E-2', 'inf', '-Infinity', 'NaN', 'nan', ' +inf',
    'P0087861', 'KV-002', 'abc', '', ' ', '-', '+', '.', 'e5', '0x10', '1_000', '١٢', '½', '12abc', 'infinite', 'N/A'];

  it('gives what TRY_CAST gives for every text', async () => {
    const rows = await session.all<{ t: string; plain: number | null; guarded: number | null }>(
      `SELECT t, TRY_CAST(t AS DOUBLE) AS plain,
         CASE WHEN regexp_matches(t, ${MAY_BE_NUMBER}) THEN TRY_CAST(t AS DOUBLE) END AS guarded
       FROM unnest(CAST(CAST($texts AS JSON) AS VARCHAR[])) AS u(t)`,
      { texts: JSON.stringify(texts) },
    );
    expect(rows).toHaveLength(texts.length);
    const differing = rows.filter((r) => !Object.is(r.plain, r.guarded));
    expect(differing).toEqual([]);
    // The guard must let real numbers through, or the test above would pass with everything null.
    expect(rows.filter((r) => r.guarded !== null).map((r) => r.t)).toEqual(expect.arrayContaining(['12', '-3.5', '1e3', 'inf', 'NaN']));
  });
});
