import { describe, expect, it } from 'vitest';
import { Session } from '../../src/engine/session.js';

describe('a second connection to a session', () => {
  it('runs a statement alongside the first, sees its tables, and closes without closing the session', async () => {
    const session = await Session.open();
    try {
      const second = await session.connectAgain();
      // Both statements are under way before either is awaited; each builds its own table.
      const a = session.run('CREATE TABLE a AS SELECT range AS x FROM range(200000)');
      const b = second.run('CREATE TABLE b AS SELECT range * 2 AS y FROM range(100000)');
      await Promise.all([a, b]);
      // By hand: 0 + 1 + … + 199,999 = 199,999 × 200,000 / 2; twice 0 + … + 99,999 = 99,999 × 100,000.
      expect(await second.one('SELECT sum(x) AS s FROM a')).toEqual({ s: 19_999_900_000n });
      second.close();
      expect(await session.one('SELECT sum(y) AS s FROM b')).toEqual({ s: 9_999_900_000n });
    } finally {
      session.close();
    }
  });
});
