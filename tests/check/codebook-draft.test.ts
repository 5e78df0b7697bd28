import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ENUM_MAX_VALUES } from '../../src/check/draft-codebook.js';
import { fieldOf, parseCodebook, type Codebook } from '../../src/project/codebook.js';
import { errata, makeProject, removeDir } from '../helpers/project.js';

/**
 * An invented delivery of 24 rows, built so that each proposal of the draft is known in advance:
 *   pid     1..24, the key
 *   smoker  current/former/never in turn: 3 distinct texts, each 8 times → enum, required
 *   site    "007"/"012" in turn: codes with leading zeros → string, enum
 *   age     29 + row, but "NA" in row 5 and 999 in row 9 → integer, not required; NA and 999 suggested
 *           as missing codes; observed range without 999: 30 (row 1) to 53 (row 24)
 *   name    24 distinct texts → no enum
 *   note    "ok", empty in row 3 → not required
 *   grade   11 distinct letters → one over the enum threshold, no enum
 *   level   10 distinct texts → at the threshold, enum
 */
function delivery(): string {
  const lines = ['pid,smoker,site,age,name,note,grade,level'];
  for (let row = 1; row <= 24; row += 1) {
    const age = row === 5 ? 'NA' : row === 9 ? '999' : String(29 + row);
    const smoker = ['current', 'former', 'never'][(row - 1) % 3];
    const site = row % 2 ? '007' : '012';
    const grade = 'ABCDEFGHIJK'[(row - 1) % 11];
    lines.push([row, smoker, site, age, `P${String(row).padStart(2, '0')}`, row === 3 ? '' : 'ok', grade, `L${(row - 1) % 10}`].join(','));
  }
  return lines.join('\n') + '\n';
}

const CONFIG = 'tables:\n  visits:\n    raw: raw/visits\n    key: pid\n';

describe('errata codebook draft', () => {
  let root: string;
  let text: string;
  let codebook: Codebook;
  beforeAll(async () => {
    root = await makeProject({ 'errata.yaml': CONFIG, 'raw/visits/2026-01-02-delivery.csv': delivery() });
    const result = await errata(root, ['codebook', 'draft', 'visits']);
    expect(result.stderr).toBe('');
    expect(result.code).toBe(0);
    text = readFileSync(path.join(root, 'codebook/visits.yaml'), 'utf8');
    codebook = parseCodebook('codebook/visits.yaml', text);
  });
  afterAll(() => removeDir(root));

  it('writes a codebook that parses back, with the key from errata.yaml and missingValues [""]', () => {
    expect(codebook.primaryKey).toEqual(['pid']);
    expect(codebook.missingValues).toEqual(['']);
    expect(codebook.fields.map((f) => [f.name, f.type])).toEqual([
      ['pid', 'integer'],
      ['smoker', 'string'],
      ['site', 'string'],
      ['age', 'integer'],
      ['name', 'string'],
      ['note', 'string'],
      ['grade', 'string'],
      ['level', 'string'],
    ]);
    expect(readdirSync(path.join(root, 'codebook'))).toEqual(['visits.yaml']);
  });

  it('proposes required only where no value is missing nor looks like a missing-value code', () => {
    const required = codebook.fields.filter((f) => f.constraints.required).map((f) => f.name);
    expect(required).toEqual(['pid', 'smoker', 'site', 'name', 'grade', 'level']);
  });

  it(`proposes an enum for text columns with at most ${ENUM_MAX_VALUES} distinct values, none for the key or free text`, () => {
    expect(ENUM_MAX_VALUES).toBe(10);
    expect(fieldOf(codebook, 'smoker')?.constraints.enum).toEqual(['current', 'former', 'never']);
    expect(fieldOf(codebook, 'site')?.constraints.enum).toEqual(['007', '012']);
    expect(fieldOf(codebook, 'note')?.constraints.enum).toEqual(['ok']);
    expect(fieldOf(codebook, 'level')?.constraints.enum).toEqual(['L0', 'L1', 'L2', 'L3', 'L4', 'L5', 'L6', 'L7', 'L8', 'L9']);
    expect(fieldOf(codebook, 'grade')?.constraints.enum).toBeUndefined();
    expect(fieldOf(codebook, 'name')?.constraints.enum).toBeUndefined();
    expect(fieldOf(codebook, 'pid')?.constraints.enum).toBeUndefined();
  });

  it('gives the observed range of numbers as observed, leaving out a code that stands apart, and suggests missing codes in comments', () => {
    const age = fieldOf(codebook, 'age');
    expect(age?.constraints.minimum).toBe(30);
    expect(age?.constraints.maximum).toBe(53);
    expect(text).toMatch(/^ {6}minimum: 30 +# observed in this delivery, not a decided limit$/m);
    expect(text).toContain('# missingValues: ["", "NA", "999"]');
    expect(text).toContain('    # 999 lies outside the range of the other values, 30 to 53: a missing-value code?');
    expect(age?.missingValues).toBeUndefined();
  });

  it('never replaces an existing codebook unless forced', async () => {
    const refused = await errata(root, ['codebook', 'draft', 'visits']);
    expect(refused.code).toBe(2);
    expect(refused.stderr).toContain('already exists');
    expect(readFileSync(path.join(root, 'codebook/visits.yaml'), 'utf8')).toBe(text);
    const printed = await errata(root, ['codebook', 'draft', 'visits', '--out', '-']);
    expect(printed.code).toBe(0);
    expect(printed.stdout).toBe(text);
    const forced = await errata(root, ['codebook', 'draft', 'visits', '--force']);
    expect(forced.code).toBe(0);
    expect(readFileSync(path.join(root, 'codebook/visits.yaml'), 'utf8')).toBe(text);
  });

  it('a check of the raw delivery against the draft finds the values the draft left for the user to decide', async () => {
    const result = await errata(root, ['check', '--raw', '--format', 'json']);
    expect(result.code).toBe(1);
    // "NA" is not an integer until declared missing; 999 is above the observed maximum 53.
    expect(JSON.parse(result.stdout).discrepancies.map((d: { key: string; column: string; value: string; rule: string }) => [d.key, d.column, d.value, d.rule])).toEqual([
      ['5', 'age', 'NA', 'type'],
      ['9', 'age', '999', 'maximum'],
    ]);
  });

  it('refuses an unknown table', async () => {
    const result = await errata(root, ['codebook', 'draft', 'nosuchtable', '--out', '-']);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('no table "nosuchtable"');
  });
});
