import { afterAll, describe, expect, it } from 'vitest';
import { ErrataError } from '../../src/errors.js';
import { checkFixture, csv, removeFixtures } from './fixtures.js';

afterAll(removeFixtures);

const BLOOD_PRESSURE = csv(
  'id,sbp,dbp,smoker,cigs',
  '1,120,80,never,0',
  '2,110,120,current,10',
  '3,,90,never,5',
  '4,130,85,NA,3',
);

/** Eight lines: the rules list starts on line 9, its first rule on line 10. */
const FIELDS = `primaryKey: id
missingValues: ["", "NA"]
fields:
  - { name: id, type: integer }
  - { name: sbp, type: integer }
  - { name: dbp, type: integer }
  - { name: smoker, type: string }
  - { name: cigs, type: integer }
`;

function withRules(rules: string): string {
  return `${FIELDS}rules:\n${rules}`;
}

async function refusal(promise: Promise<unknown>): Promise<ErrataError> {
  const error = await promise.then(
    () => null,
    (e: unknown) => e,
  );
  expect(error).toBeInstanceOf(ErrataError);
  return error as ErrataError;
}

describe('cross-variable rules', () => {
  it('report each row where the condition is false, with the rule\'s own name, severity and message', async () => {
    // Row 1: 80 < 120 holds as numbers (as text, "80" < "120" would not: declared types apply).
    // Row 2 breaks the error rule (120 is not below 110). Row 3 has no systolic value, so the blood
    // pressure rule is unknown there, not broken; it breaks the warning rule (a non-smoker with 5
    // cigarettes). Row 4's smoker is "NA", a missing value, so its rule is unknown too.
    const d = await checkFixture(
      BLOOD_PRESSURE,
      withRules(`  - name: diastolic-below-systolic
    assert: "dbp < sbp"
    message: Diastolic pressure must be below systolic pressure
    severity: error
  - name: only-smokers-count-cigarettes
    assert: "smoker = 'current' OR cigs = 0"
    message: Only current smokers report cigarettes
    severity: warning
`),
    );
    expect(d).toEqual([
      { key: '2', column: 'dbp, sbp', value: 'dbp=120, sbp=110', rule: 'diastolic-below-systolic', severity: 'error', message: 'Diastolic pressure must be below systolic pressure' },
      { key: '3', column: 'smoker, cigs', value: 'smoker=never, cigs=5', rule: 'only-smokers-count-cigarettes', severity: 'warning', message: 'Only current smokers report cigarettes' },
    ]);
  });

  it('default to severity error and a message naming the rule', async () => {
    const d = await checkFixture(BLOOD_PRESSURE, withRules('  - name: sbp-plausible\n    assert: "sbp BETWEEN 115 AND 125"\n'));
    expect(d.map((x) => [x.key, x.severity, x.message])).toEqual([
      ['2', 'error', 'rule sbp-plausible does not hold'],
      ['4', 'error', 'rule sbp-plausible does not hold'],
    ]);
  });

  it('report a rule that reads a column the table lacks as a discrepancy, not a crash', async () => {
    const d = await checkFixture(BLOOD_PRESSURE, withRules('  - name: bmi-range\n    assert: "bmi < 60"\n    severity: warning\n'));
    expect(d).toEqual([{ key: null, column: 'bmi', value: null, rule: 'bmi-range', severity: 'warning', message: 'cannot be checked: the table has no column "bmi"' }]);
  });

  it.each([
    ['a subquery reading a file', `(SELECT count(*) FROM read_csv('/etc/passwd')) > 0`],
    ['a function reading the environment', `getenv('HOME') IS NOT NULL`],
    ['a second statement', `sbp > 0; COPY (SELECT 1) TO '/tmp/errata-leak.csv'`],
    ['a query parameter', `sbp > $p0`],
  ])('refuse a hostile rule expression: %s (EXPRESSION_FORBIDDEN)', async (_, expression) => {
    const error = await refusal(checkFixture(BLOOD_PRESSURE, withRules(`  - name: sneaky\n    assert: ${JSON.stringify(expression)}\n`)));
    expect(error.code).toBe('EXPRESSION_FORBIDDEN');
    expect(error.data.file).toMatch(/codebook\.yaml$/);
    expect(error.data.line).toBe(10);
  });

  it('refuse a rule that is not a condition, naming its line', async () => {
    const error = await refusal(checkFixture(BLOOD_PRESSURE, withRules('  - name: a-sum\n    assert: "sbp + dbp"\n')));
    expect(error.code).toBe('SCHEMA_INVALID');
    expect(error.message).toContain('must be true or false');
    expect(error.data.line).toBe(10);
  });
});

describe('a codebook whose constraints do not fit their field is bad input', () => {
  it.each([
    ['minimum on a string field', '{ name: smoker, type: string, constraints: { minimum: 1 } }', 'minimum applies to integer, number and date fields'],
    ['pattern on an integer field', '{ name: smoker, type: integer, constraints: { pattern: "[0-9]+" } }', 'pattern applies to string fields'],
    ['a pattern that is not a regular expression', '{ name: smoker, type: string, constraints: { pattern: "([a-z" } }', 'not a valid regular expression'],
    ['an enum value that is not an integer', '{ name: smoker, type: integer, constraints: { enum: [1, two] } }', 'enum value "two" is not an integer'],
    ['a maximum that is not a date', '{ name: smoker, type: date, constraints: { maximum: "31/12/2024" } }', 'maximum 31/12/2024 is not a date'],
  ])('%s', async (_, field, message) => {
    const codebook = `fields:\n  - { name: id, type: integer }\n  - ${field}\n`;
    const error = await refusal(checkFixture(csv('id,smoker', '1,2'), codebook));
    expect(error.code).toBe('SCHEMA_INVALID');
    expect(error.message).toContain(message);
    expect(error.data.line).toBe(3);
  });
});
