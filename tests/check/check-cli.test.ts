import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { commit, errata, makeProject, removeDir, writeFiles } from '../helpers/project.js';

/**
 * `errata check` end to end on a temporary project: a raw delivery with three problems, a codebook,
 * and then a correction that fixes two of them.
 */

const RAW = ['pid,age,sex,sbp,dbp', '1,34,1,120,80', '2,999,2,110,70', '3,41,3,130,90', '4,52,1,125,130'].join('\n') + '\n';

const CODEBOOK = `primaryKey: pid
fields:
  - { name: pid, type: integer }
  - { name: age, type: integer, constraints: { minimum: 18, maximum: 99 } }
  - { name: sex, type: integer, constraints: { enum: [1, 2] } }
  - { name: sbp, type: integer }
  - { name: dbp, type: integer }
rules:
  - name: diastolic-below-systolic
    assert: "dbp < sbp"
    message: Diastolic pressure must be below systolic pressure
    severity: warning
`;

const CORRECTION = `reason: 999 in age means not asked; participant 3's sex was mistyped
approval: N-0001
steps:
  - missing: { columns: [age], values: [999] }
  - edit:
      - { key: 3, column: sex, from: 3, to: 2 }
`;

const KEYS = ['key', 'column', 'value', 'rule', 'severity', 'message'];

describe('errata check on a project', () => {
  let root: string;
  beforeAll(async () => {
    root = await makeProject({
      'errata.yaml': 'tables:\n  visits:\n    raw: raw/visits\n    key: pid\n',
      'raw/visits/2026-01-02-delivery.csv': RAW,
      'codebook/visits.yaml': CODEBOOK,
    });
    writeFiles(root, { 'corrections/visits/0001-age-and-sex.yaml': CORRECTION });
    await commit(root, 'Age 999 is missing; fix a mistyped sex');
  });
  afterAll(() => removeDir(root));

  it('check --raw lists each discrepancy of the delivery as JSON, keys in the documented order, and exits 1', async () => {
    const result = await errata(root, ['check', '--raw', '--format', 'json']);
    expect(result.code).toBe(1);
    expect(result.stdout.startsWith('{"discrepancies":[')).toBe(true);
    const json = JSON.parse(result.stdout) as { discrepancies: Array<Record<string, unknown>> };
    expect(Object.keys(json)).toEqual(['discrepancies']);
    for (const d of json.discrepancies) expect(Object.keys(d)).toEqual(KEYS);
    // By hand: 999 > 99 (row 2); 3 is not in [1, 2] (row 3); 130 is not below 125 (row 4, a warning).
    expect(json.discrepancies).toEqual([
      { key: '2', column: 'age', value: '999', rule: 'maximum', severity: 'error', message: 'above the maximum 99' },
      { key: '3', column: 'sex', value: '3', rule: 'enum', severity: 'error', message: 'not one of the allowed values: 1, 2' },
      { key: '4', column: 'dbp, sbp', value: 'dbp=130, sbp=125', rule: 'diastolic-below-systolic', severity: 'warning', message: 'Diastolic pressure must be below systolic pressure' },
    ]);
  });

  it('check groups the text output by rule with counts', async () => {
    const result = await errata(root, ['check', 'visits', '--raw']);
    expect(result.code).toBe(1);
    expect(result.stdout).toContain('visits (raw, 4 rows): 2 errors, 1 warning');
    expect(result.stdout).toMatch(/^ {2}maximum: 1 error\n {4}pid=2 +age +999 +above the maximum 99$/m);
    expect(result.stdout).toMatch(/^ {2}enum: 1 error$/m);
    expect(result.stdout).toMatch(/^ {2}diastolic-below-systolic: 1 warning$/m);
  });

  it('check of the clean build exits 0 when only warnings remain', async () => {
    const result = await errata(root, ['check', '--format', 'json']);
    expect(result.code).toBe(0);
    expect(JSON.parse(result.stdout).discrepancies.map((d: { rule: string; key: string }) => [d.rule, d.key])).toEqual([['diastolic-below-systolic', '4']]);
  });

  it('check --rev checks the clean data as it stood before the correction', async () => {
    const result = await errata(root, ['check', '--rev', 'HEAD~1', '--format', 'json']);
    expect(result.code).toBe(1);
    expect(JSON.parse(result.stdout).discrepancies.map((d: { rule: string }) => d.rule)).toEqual(['maximum', 'enum', 'diastolic-below-systolic']);
  });

  it('check --files checks a file against a codebook outside the project', async () => {
    const result = await errata(path.dirname(root), [
      'check',
      '--files',
      path.join(root, 'raw/visits/2026-01-02-delivery.csv'),
      '--codebook',
      path.join(root, 'codebook/visits.yaml'),
      '--key',
      'pid',
      '--format',
      'json',
    ]);
    expect(result.code).toBe(1);
    expect(JSON.parse(result.stdout).discrepancies.map((d: { key: string; rule: string }) => `${d.rule}:${d.key}`)).toEqual(['maximum:2', 'enum:3', 'diastolic-below-systolic:4']);
  });

  it('check exits 2 on bad usage or bad input, saying what is wrong', async () => {
    const noCodebook = await errata(root, ['check', '--files', 'raw/visits/2026-01-02-delivery.csv']);
    expect(noCodebook.code).toBe(2);
    expect(noCodebook.stderr).toContain('--files and --codebook go together');
    const unknown = await errata(root, ['check', 'nosuchtable']);
    expect(unknown.code).toBe(2);
    expect(unknown.stderr).toContain('no table "nosuchtable"');
    const missingFile = await errata(root, ['check', '--files', 'raw/visits/2026-01-02-delivery.csv', '--codebook', 'codebook/none.yaml']);
    expect(missingFile.code).toBe(2);
    expect(missingFile.stderr).toContain('no such codebook');
  });

  it('check exits 2 for a codebook rule that tries to read a file, and names its line', async () => {
    writeFiles(root, { 'codebook/visits.yaml': `${CODEBOOK}  - name: leak\n    assert: "length(getenv('HOME')) > 0"\n` });
    try {
      const result = await errata(root, ['check']);
      expect(result.code).toBe(2);
      // CODEBOOK is twelve lines, so the appended rule starts on line 13.
      expect(result.stderr).toContain('codebook/visits.yaml:13: rule leak');
      expect(result.stderr).toContain('getenv');
    } finally {
      writeFiles(root, { 'codebook/visits.yaml': CODEBOOK });
    }
  });

  it('a table without a codebook is named as such', async () => {
    const bare = await makeProject({ 'errata.yaml': 'tables:\n  visits:\n    raw: raw/visits\n    key: pid\n', 'raw/visits/d.csv': RAW });
    try {
      const result = await errata(bare, ['check', 'visits']);
      expect(result.code).toBe(2);
      expect(result.stderr).toContain('table "visits" has no codebook (codebook/visits.yaml)');
      expect(result.stderr).toContain('errata codebook draft visits');
    } finally {
      removeDir(bare);
    }
  });

  it('renders help for check and codebook draft', async () => {
    for (const args of [['check', '--help'], ['codebook', 'draft', '--help']]) {
      const result = await errata(root, args);
      expect(result.code).toBe(0);
      expect(result.stdout).toContain(`Usage: errata ${args.slice(0, -1).join(' ')}`);
    }
  });
});
