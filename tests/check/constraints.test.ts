import { afterAll, describe, expect, it } from 'vitest';
import { checkFixture, csv, found, removeFixtures } from './fixtures.js';

/**
 * One fixture per constraint kind of the Frictionless Table Schema. The expected discrepancies follow
 * the specification's meaning of each constraint, recalled from memory of the Table Schema text
 * (specs.frictionlessdata.io/table-schema): missingValues are strings that mean "no value" and are
 * tested before anything else (default [""]); a value is then cast to the field's type, and a value
 * that does not cast is a type error; the constraints are tested on the cast (logical) value, and a
 * missing value satisfies every constraint but `required`.
 */

afterAll(removeFixtures);

describe('codebook constraints, each as the Table Schema defines it', () => {
  it('type: a present value that does not cast to the declared type is a type discrepancy; a missing one is not', async () => {
    // Spec (from memory): integer is a whole number without a fraction; number allows a fraction and
    // an exponent; date defaults to the ISO form YYYY-MM-DD and must be a real day; boolean accepts
    // true/false spellings. 2024-02-29 exists (2024 is a leap year); 2024-02-30 does not.
    const d = await checkFixture(
      csv('id,n,x,d,b', '1,12,1.5e3,2024-02-29,TRUE', '2,12.5,abc,2024-02-30,false', '3,abc,-0.25,2024-2-3,yes', '4,,7,2023-12-31,'),
      `primaryKey: id
fields:
  - { name: id, type: integer }
  - { name: n, type: integer }
  - { name: x, type: number }
  - { name: d, type: date }
  - { name: b, type: boolean }
`,
    );
    expect(d.filter((x) => x.rule === 'type').map((x) => [x.key, x.column, x.value])).toEqual([
      ['2', 'n', '12.5'],
      ['3', 'n', 'abc'],
      ['2', 'x', 'abc'],
      ['2', 'd', '2024-02-30'],
      ['3', 'd', '2024-2-3'],
      ['3', 'b', 'yes'],
    ]);
    expect(d.every((x) => x.rule === 'type' && x.severity === 'error')).toBe(true);
  });

  it('required: an empty field and an empty string are both missing under the default missingValues', async () => {
    // Spec (from memory): required means every row must have a value; with missingValues [""] an
    // empty string is no value. Age is not required, so its empty cells are no discrepancy.
    const d = await checkFixture(
      csv('id,name,age', '1,Ana,34', '2,,41', '3,"",', '4,Bo,'),
      `primaryKey: id
fields:
  - { name: id, type: integer }
  - { name: name, type: string, constraints: { required: true } }
  - { name: age, type: integer }
`,
    );
    expect(d.map((x) => [x.key, x.column, x.value, x.rule])).toEqual([
      ['2', 'name', null, 'required'],
      ['3', 'name', '', 'required'],
    ]);
  });

  it('unique: every row holding a value another row holds, compared as values of the type, missing values aside', async () => {
    // Spec (from memory): unique means all values of the field are unique in the file; values are
    // compared after casting, so 1 and 1.0 are the same number, and missing values are not compared.
    const d = await checkFixture(
      csv('id,code,score', '1,A,1', '2,B,1.0', '3,A,2', '4,,3', '5,,2.00'),
      `primaryKey: id
fields:
  - { name: id, type: integer }
  - { name: code, type: string, constraints: { unique: true } }
  - { name: score, type: number, constraints: { unique: true } }
`,
    );
    expect(d.filter((x) => x.column === 'code').map((x) => [x.key, x.value, x.rule])).toEqual([
      ['1', 'A', 'unique'],
      ['3', 'A', 'unique'],
    ]);
    expect(d.filter((x) => x.column === 'score').map((x) => [x.key, x.value])).toEqual([
      ['1', '1'],
      ['2', '1.0'],
      ['3', '2'],
      ['5', '2.00'],
    ]);
    expect(d[0].message).toBe('the same value is in 2 rows');
  });

  it('minimum and maximum: bounds are inclusive, for integers, numbers and dates alike', async () => {
    // Spec (from memory): minimum means the value is greater than or equal to it, maximum less than
    // or equal to it; both apply to numbers and dates, compared as such (so 2.49 < 2.5).
    const d = await checkFixture(
      csv('id,age,weight,visit', '1,0,2.5,2024-03-01', '2,-1,2.49,2024-02-29', '3,120,80,2024-12-31', '4,121,300.5,2025-01-01', '5,,,'),
      `primaryKey: id
fields:
  - { name: id, type: integer }
  - { name: age, type: integer, constraints: { minimum: 0, maximum: 120 } }
  - { name: weight, type: number, constraints: { minimum: 2.5, maximum: 300 } }
  - { name: visit, type: date, constraints: { minimum: "2024-03-01", maximum: "2024-12-31" } }
`,
    );
    expect(d.map((x) => [x.key, x.column, x.value, x.rule])).toEqual([
      ['2', 'age', '-1', 'minimum'],
      ['4', 'age', '121', 'maximum'],
      ['2', 'weight', '2.49', 'minimum'],
      ['4', 'weight', '300.5', 'maximum'],
      ['2', 'visit', '2024-02-29', 'minimum'],
      ['4', 'visit', '2025-01-01', 'maximum'],
    ]);
    expect(d[0].message).toBe('below the minimum 0');
    expect(d[1].message).toBe('above the maximum 120');
  });

  it('minLength and maxLength: the number of characters, bounds inclusive', async () => {
    // Spec (from memory): minLength and maxLength bound the length of a string, inclusive. Length
    // counts characters, not bytes: "héé" is 3 characters (5 bytes in UTF-8).
    const d = await checkFixture(
      csv('id,code', '1,a', '2,ab', '3,abcd', '4,abcde', '5,héé', '6,'),
      `primaryKey: id
fields:
  - { name: id, type: integer }
  - { name: code, type: string, constraints: { minLength: 2, maxLength: 4 } }
`,
    );
    expect(found(d, 'minLength')).toEqual([['1', 'a']]);
    expect(found(d, 'maxLength')).toEqual([['4', 'abcde']]);
    expect(d).toHaveLength(2);
  });

  it('pattern: the whole value must match the regular expression, case included', async () => {
    // Spec (from memory): pattern is an XML Schema regular expression, which matches the whole value
    // (it is implicitly anchored), so "KV-1234" and "xKV-123" do not match KV-[0-9]{3}.
    const d = await checkFixture(
      csv('id,pid', '1,KV-123', '2,KV-1234', '3,xKV-123', '4,kv-123', '5,'),
      `primaryKey: id
fields:
  - { name: id, type: integer }
  - { name: pid, type: string, constraints: { pattern: "KV-[0-9]{3}" } }
`,
    );
    expect(found(d, 'pattern')).toEqual([
      ['2', 'KV-1234'],
      ['3', 'xKV-123'],
      ['4', 'kv-123'],
    ]);
    expect(d).toHaveLength(3);
  });

  it('enum: the value must equal one of the listed values, as text for strings and as values for numbers', async () => {
    // Spec (from memory): enum means the value must exactly match one of the array's values, compared
    // after casting: "Never" is not "never"; 2.0 equals 2 in a number field. "1.0" is not an integer,
    // so in the integer field it is a type discrepancy and its enum is not tested.
    const d = await checkFixture(
      csv('id,smoker,sex,dose', '1,never,1,1.5', '2,Never,2,2.0', '3,current,3,2.5', '4,,1.0,'),
      `primaryKey: id
fields:
  - { name: id, type: integer }
  - { name: smoker, type: string, constraints: { enum: [never, former, current] } }
  - { name: sex, type: integer, constraints: { enum: [1, 2] } }
  - { name: dose, type: number, constraints: { enum: [1.5, 2] } }
`,
    );
    expect(d.map((x) => [x.key, x.column, x.value, x.rule])).toEqual([
      ['2', 'smoker', 'Never', 'enum'],
      ['4', 'sex', '1.0', 'type'],
      ['3', 'sex', '3', 'enum'],
      ['3', 'dose', '2.5', 'enum'],
    ]);
    expect(d[0].message).toBe('not one of the allowed values: "never", "former", "current"');
  });

  it('missingValues: codes count as missing before any other check, codebook-wide or per field', async () => {
    // Spec (from memory): missingValues lists the strings that mean "no value"; they are tested before
    // the type, so "NA" in an integer field is no type error and -99 breaks no minimum; a missing
    // value breaks only `required`. A field's own missingValues replaces the codebook-wide list, so
    // "NA" is an ordinary (and here not allowed) value of site, while "." is missing there.
    const d = await checkFixture(
      csv('id,age,site,note', '1,34,A,x', '2,NA,NA,NA', '3,-99,B,-99', '4,"",C,""', '5,,.,.'),
      `primaryKey: id
missingValues: ["", "NA", "-99"]
fields:
  - { name: id, type: integer }
  - { name: age, type: integer, constraints: { required: true, minimum: 0 } }
  - { name: site, type: string, missingValues: ["."], constraints: { required: true, enum: [A, B, C] } }
  - { name: note, type: string, constraints: { maxLength: 1 } }
`,
    );
    expect(d.map((x) => [x.key, x.column, x.value, x.rule])).toEqual([
      ['2', 'age', 'NA', 'required'],
      ['3', 'age', '-99', 'required'],
      ['4', 'age', '', 'required'],
      ['5', 'age', null, 'required'],
      ['5', 'site', '.', 'required'],
      ['2', 'site', 'NA', 'enum'],
    ]);
    expect(d[0].message).toBe('"NA" counts as missing, but a value is required');
  });

  it('missingValues: an empty list makes an empty string a value; a field with no text at all stays missing', async () => {
    // Spec (from memory): with missingValues [] no string is missing, so a quoted "" is a present,
    // empty value. errata reads an unquoted empty CSV field as no value at all (not as text), so
    // that cell is missing whatever the list says.
    const d = await checkFixture(
      csv('id,name', '1,""', '2,', '3,Ana'),
      `primaryKey: id
missingValues: []
fields:
  - { name: id, type: integer }
  - { name: name, type: string, constraints: { required: true } }
`,
    );
    expect(d.map((x) => [x.key, x.value, x.rule])).toEqual([['2', null, 'required']]);
  });

  it('primaryKey: every row needs a key and no two rows may share one', async () => {
    // Spec (from memory): the primary key's values must be present and unique across rows. A row
    // with no key is named by its position among the data rows.
    const d = await checkFixture(
      csv('pid,x', '1,a', '2,b', '2,c', ',d'),
      `primaryKey: pid
fields:
  - { name: pid, type: integer }
  - { name: x, type: string }
`,
    );
    expect(d.map((x) => [x.key, x.column, x.value, x.rule, x.message])).toEqual([
      ['row 4', 'pid', null, 'primaryKey', 'no value in the key (pid)'],
      ['2', 'pid', '2', 'primaryKey', 'the key is the same in 2 rows'],
      ['2', 'pid', '2', 'primaryKey', 'the key is the same in 2 rows'],
    ]);
  });

  it('a text primary key that is also unique and patterned: each constraint reports on its own', async () => {
    // Spec (from memory): primaryKey means present and unique; unique and pattern are the field's own
    // constraints, so a repeated key breaks both primaryKey and unique, and a missing key breaks
    // primaryKey and required but not pattern (a missing value satisfies every constraint but required).
    const d = await checkFixture(
      csv('pid,x', 'KV-001,a', 'KV-002,b', 'KV-002,c', 'kv-003,d', ',e'),
      `primaryKey: pid
fields:
  - { name: pid, type: string, constraints: { required: true, unique: true, pattern: "KV-[0-9]{3}" } }
  - { name: x, type: string }
`,
    );
    expect(d.map((x) => [x.key, x.value, x.rule])).toEqual([
      ['row 5', null, 'primaryKey'],
      ['KV-002', 'KV-002', 'primaryKey'],
      ['KV-002', 'KV-002', 'primaryKey'],
      ['row 5', null, 'required'],
      ['KV-002', 'KV-002', 'unique'],
      ['KV-002', 'KV-002', 'unique'],
      ['kv-003', 'kv-003', 'pattern'],
    ]);
  });

  it('columns: a described column the file lacks is an error, an undescribed one a warning', async () => {
    const d = await checkFixture(
      csv('id,extra', '1,a'),
      `primaryKey: id
fields:
  - { name: id, type: integer }
  - { name: age, type: integer }
`,
    );
    expect(d).toEqual([
      { key: null, column: 'age', value: null, rule: 'field', severity: 'error', message: 'described in the codebook, but the table has no such column' },
      { key: null, column: 'extra', value: null, rule: 'field', severity: 'warning', message: 'in the table, but not described in the codebook' },
    ]);
  });

  it('rows without a key are named by their position, and listed in key order otherwise', async () => {
    const codebook = 'fields:\n  - { name: id, type: integer }\n  - { name: v, type: integer, constraints: { maximum: 5 } }\n';
    const unkeyed = await checkFixture(csv('id,v', '10,9', '9,7', '11,1'), codebook);
    expect(found(unkeyed, 'maximum')).toEqual([
      ['row 1', '9'],
      ['row 2', '7'],
    ]);
    // Keys held as text sort as numbers: 9 before 10.
    const keyed = await checkFixture(csv('id,v', '10,9', '9,7', '11,1'), codebook, { key: ['id'] });
    expect(found(keyed, 'maximum')).toEqual([
      ['9', '7'],
      ['10', '9'],
    ]);
  });
});
