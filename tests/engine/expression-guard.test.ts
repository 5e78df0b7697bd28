import { existsSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { assertSafeExpression } from '../../src/engine/expression-guard.js';
import { Session } from '../../src/engine/session.js';
import { ErrataError } from '../../src/errors.js';
import { errata, makeProject, removeDir } from '../helpers/project.js';

/**
 * Correction expressions come from pull requests. The guard lets through one scalar expression over
 * the row and refuses anything that could run a statement, read a file or reach outside the row.
 */

let session: Session;
beforeAll(async () => {
  session = await Session.open();
});
afterAll(() => session.close());

const WHERE = { file: 'corrections/visits/0003-heights.yaml', line: 4, what: 'set height' };

async function refusal(expression: string): Promise<ErrataError> {
  const error = await assertSafeExpression(session, expression, WHERE).then(
    () => null,
    (e: unknown) => e,
  );
  expect(error, `expected ${JSON.stringify(expression)} to be refused`).toBeInstanceOf(ErrataError);
  return error as ErrataError;
}

describe('expressions that must be refused', () => {
  it.each([
    ['a second statement after ";"', 'height; DROP TABLE clean_visits'],
    ['a comment trick that closes the wrapper and ends the statement', '1) FROM t; --'],
    ['a comment trick without a statement end', '1) FROM t --'],
    ['a block comment', 'height /* note */ * 2'],
    ['a scalar subquery', '(SELECT max(height) FROM clean_visits)'],
    ['an IN subquery', "id IN (SELECT id FROM clean_visits WHERE site = 'N')"],
    ['an EXISTS subquery', 'EXISTS (SELECT 1)'],
    ['reading a file with read_csv', "read_csv('/etc/passwd')"],
    ['reading a file with read_text', "read_text('/etc/passwd')"],
    ['a subquery reading a file', "(SELECT * FROM read_csv('/etc/passwd'))"],
    ['reading the environment', "getenv('HOME')"],
    ['reading a setting', "current_setting('threads')"],
    ['running a query from text', "query('SELECT 1')"],
    ['a UNION that escapes the wrapper', '1) AS a FROM t UNION SELECT (2'],
    ['a second select item', '1) AS a, (2'],
    ['a window function', 'avg(height) OVER ()'],
    ['a qualified column name', 'clean_visits.height'],
    ['an empty expression', '   '],
  ])('refuses %s', async (_what, expression) => {
    const error = await refusal(expression);
    expect(['EXPRESSION_FORBIDDEN', 'EXPRESSION_INVALID']).toContain(error.code);
    expect(error.data).toMatchObject({ file: WHERE.file, line: WHERE.line });
  });

  it('refuses a statement separator with EXPRESSION_FORBIDDEN and says why', async () => {
    const error = await refusal('height; DROP TABLE clean_visits');
    expect(error.code).toBe('EXPRESSION_FORBIDDEN');
    expect(error.message).toContain(';');
  });

  it('refuses a file reader with EXPRESSION_FORBIDDEN naming the function', async () => {
    const error = await refusal("read_csv('/etc/passwd')");
    expect(error.code).toBe('EXPRESSION_FORBIDDEN');
    expect(error.message).toContain('read_csv');
  });

  it('refuses an expression that does not parse with EXPRESSION_INVALID', async () => {
    const error = await refusal('round(height * 2.54, 1');
    expect(error.code).toBe('EXPRESSION_INVALID');
  });

  it('refuses aggregates and table functions, telling which by the engine\'s own catalogue', async () => {
    expect((await refusal('sum(height)')).message).toContain('aggregate');
    expect((await refusal("string_agg(site, ',')")).message).toContain('aggregate');
    expect((await refusal('unnest([1, 2])')).message).toContain('not a scalar function');
  });

  it('refuses functions whose value differs from run to run, since a rebuild must give the same bytes', async () => {
    for (const expression of ['random()', 'now()', 'current_date', 'uuid()']) {
      const error = await refusal(expression);
      expect(error.code, expression).toBe('EXPRESSION_FORBIDDEN');
    }
  });
});

describe('ordinary expressions are accepted', () => {
  it.each([
    'round(height * 2.54, 1)',
    'height < 90',
    "site = 'N' AND visits IS NOT NULL",
    'coalesce(weight, 0)',
    "CASE WHEN sex = 1 THEN 'male' WHEN sex = 2 THEN 'female' END",
    "note || ' -- checked; ok'",
    'nullif(score, -99)',
    'id IN (1042, 1043)',
    'age BETWEEN 18 AND 65',
    '"weight (kg)" / 2',
    "strftime(seen, '%Y')",
    'CAST(visits AS INTEGER)',
    "lower(trim(site)) LIKE 'n%'",
  ])('accepts %s', async (expression) => {
    await expect(assertSafeExpression(session, expression, WHERE)).resolves.toBeUndefined();
  });
});

describe('in a build', () => {
  let root: string;
  afterAll(() => removeDir(root));

  it('a correction with a forbidden expression stops the build at its file and line, writing nothing', async () => {
    root = await makeProject(
      {
        'errata.yaml': 'tables:\n  t:\n    raw: raw/t/\n    key: id\n',
        'raw/t/delivery.csv': 'id,height\n1,60.5\n2,170.2\n',
        'corrections/t/0001-heights.yaml': [
          'reason: Heights', // 1
          'steps:', // 2
          '  - set: { height: "height * 2.54" }', // 3
          '  - set: { height: "(SELECT count(*) FROM read_csv(\'/etc/passwd\'))" }', // 4
          '',
        ].join('\n'),
      },
      { commit: false },
    );
    const result = await errata(root, ['build']);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('corrections/t/0001-heights.yaml:4');
    expect(result.stderr).toMatch(/not allowed/);
    expect(existsSync(path.join(root, 'clean'))).toBe(false);
  });
});
