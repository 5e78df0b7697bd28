import { readFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { commitLog, listBlobsAt } from '../../src/git/repo.js';
import { errata, removeDir, tempDir, type CliResult } from '../helpers/project.js';

// The expected values below are the problems the demo generator plants (src/demo/cohort.ts) and the
// decisions its correction files record.
const PLANTED_CELLS = [
  { problem: 'heights in inches at one site', key: 'KV-00188', column: 'height_cm', raw: '62.1', clean: '157.7', step: '0007-heights-in-inches.yaml step 1 (set' },
  { problem: 'a decimal slip', key: 'KV-00417', column: 'weight_kg', raw: '7.12', clean: '71.2', step: '0008-weight-decimal-slip.yaml step 1 (edit' },
  { problem: 'an impossible age', key: 'KV-01388', column: 'age', raw: '214', clean: '41', step: '0009-impossible-age.yaml step 1 (edit' },
  { problem: 'a not-measured sentinel', key: 'KV-00093', column: 'systolic_bp', raw: '999 (as sys_bp)', clean: '∅', step: '0003-blood-pressure-not-measured.yaml step 1 (missing' },
  { problem: 'an out-of-code answer', key: 'KV-00052', column: 'smoking_status', raw: '4', clean: '3', step: '0004-smoking-code-4.yaml step 1 (recode' },
  { problem: 'two answers that contradict', key: 'KV-00128', column: 'ever_smoked', raw: 'no', clean: 'yes', step: '0005-ever-smoked.yaml step 1 (set' },
];

const HISTORY = [
  ['Declare the baseline table and who approves changes', ['errata.yaml', 'people.yaml']],
  ['Add the baseline delivery of 24 January 2025', ['raw/baseline/2025-01-24-delivery.csv']],
  ['Add the baseline codebook', ['codebook/baseline.yaml']],
  ['Record N-001: blood pressure names and the not-measured code', ['notes/N-001.md']],
  ['Rename the exported blood pressure columns', ['corrections/baseline/0001-blood-pressure-names.yaml']],
  ['Record N-002: training records at Vellacourt', ['notes/N-002.md']],
  ['Delete the three training records', ['corrections/baseline/0002-training-records.yaml']],
  ['Record 999 in blood pressure as not measured', ['corrections/baseline/0003-blood-pressure-not-measured.yaml']],
  ['Record N-003: smoking answers', ['notes/N-003.md']],
  ['Recode smoking status 4 (occasional) to current smoker', ['corrections/baseline/0004-smoking-code-4.yaml']],
  ['Set ever smoked to yes for current and former smokers', ['corrections/baseline/0005-ever-smoked.yaml']],
  ['Record N-004: cigarettes per day written as text', ['notes/N-004.md']],
  ['Make cigarettes per day a whole-number column', ['corrections/baseline/0006-cigarettes-per-day.yaml']],
  ['Record N-005: heights in inches at Quorrin Bay', ['notes/N-005.md']],
  ['Convert the Quorrin Bay inch heights to centimetres', ['corrections/baseline/0007-heights-in-inches.yaml']],
  ['Record N-006: answers to query round 1', ['notes/N-006.md']],
  ['Correct a weight entered with a decimal slip', ['corrections/baseline/0008-weight-decimal-slip.yaml']],
  ['Correct an impossible age', ['corrections/baseline/0009-impossible-age.yaml']],
  ['Record N-007: body mass index from the analysis plan', ['notes/N-007.md']],
  ['Derive body mass index', ['corrections/baseline/0010-body-mass-index.yaml']],
  ['Build clean data', ['clean/baseline.csv', 'clean/baseline.lineage.parquet', 'clean/manifest.json']],
] as const;

describe('errata init --demo', () => {
  let parent: string;
  let root: string;
  let created: CliResult;

  beforeAll(async () => {
    parent = tempDir('errata-demo-test-');
    root = path.join(parent, 'kvc');
    created = await errata(parent, ['init', '--demo', root]);
  });

  afterAll(() => removeDir(parent));

  function cleanTable(): { header: string[]; rows: Map<string, Record<string, string>> } {
    const [headerLine, ...lines] = readFileSync(path.join(root, 'clean', 'baseline.csv'), 'utf8').trimEnd().split('\n');
    const header = headerLine.split(',');
    const rows = new Map(lines.map((line) => {
      const values = line.split(',');
      return [values[0], Object.fromEntries(header.map((name, i) => [name, values[i]]))] as const;
    }));
    return { header, rows };
  }

  it('creates the study and reports its size', () => {
    expect(created.stderr).toBe('');
    expect(created.code).toBe(0);
    expect(created.stdout).toContain('2400 rows, 15 variables, 21 commits');
  });

  it('builds a clean table of 2,400 participants and 15 variables, training records removed', () => {
    const { header, rows } = cleanTable();
    expect(header).toEqual([
      'participant_id', 'site', 'visit_date', 'age', 'sex', 'education', 'smoking_status', 'ever_smoked',
      'systolic_bp', 'diastolic_bp', 'height_cm', 'weight_kg', 'cholesterol_mmol', 'cigarettes_per_day', 'bmi',
    ]);
    expect(rows.size).toBe(2400);
    expect(rows.has('KV-90001')).toBe(false);
    expect(new Set([...rows.values()].map((r) => r.site))).toEqual(new Set(['003', '007', '012', '015', '021']));
    expect(rows.get('KV-00264')?.cigarettes_per_day).toBe('10');
    expect(rows.get('KV-00417')?.bmi).toBe('26.8');
    const raw = readFileSync(path.join(root, 'raw', 'baseline', '2025-01-24-delivery.csv'), 'utf8').trimEnd().split('\n');
    expect(raw).toHaveLength(1 + 2403);
  });

  it('passes verify on the fresh demo', async () => {
    const result = await errata(root, ['verify']);
    expect(result.stdout).toContain('3 outputs match the rebuild');
    expect(result.code).toBe(0);
  });

  it('explains each planted cell with its raw value, the correction and the corrected value', async () => {
    const results = await Promise.all(PLANTED_CELLS.map((cell) => errata(root, ['why', 'baseline', cell.key, cell.column])));
    for (const [index, cell] of PLANTED_CELLS.entries()) {
      const { code, stdout } = results[index];
      expect(code, cell.problem).toBe(0);
      expect(stdout, cell.problem).toContain(`raw:    ${cell.raw}\n`);
      expect(stdout, cell.problem).toContain(cell.step);
      expect(stdout, cell.problem).toContain(`${cell.raw.split(' ')[0]} → ${cell.clean} (${cell.column})`);
      expect(stdout, cell.problem).toContain(`clean:  ${cell.clean}\n`);
    }
  });

  it('explains a number delivered as text, and a deleted training record', async () => {
    const [result, deleted] = await Promise.all([
      errata(root, ['why', 'baseline', 'KV-00264', 'cigs_per_day']),
      errata(root, ['why', 'baseline', 'KV-90002', 'age']),
    ]);
    expect(result.code).toBe(0);
    expect(result.stdout).toContain('raw:    ten\n');
    expect(result.stdout).toContain('ten → 10 (cigs_per_day)');
    expect(result.stdout).toContain('column cigs_per_day dropped');
    expect(deleted.stdout).toContain('row deleted');
  });

  it('commits set-up, delivery, codebook, each note and each correction, then the build, in that order', async () => {
    const commits = (await commitLog(root)).reverse();
    expect(commits.map((c) => c.message.trim())).toEqual(HISTORY.map(([message]) => message));
    const first = (await listBlobsAt(root, commits[0].oid, '')).map((b) => b.path);
    expect(first).toEqual(expect.arrayContaining([...HISTORY[0][1], '.gitignore']));
    expect(first.filter((p) => !p.endsWith('.gitkeep'))).toHaveLength(3);
    const authors = new Set(commits.map((c) => c.author.name));
    expect(authors).toEqual(new Set(['Pell Arendt', 'Sunniva Okafor-Lund']));
    for (let i = 1; i < commits.length; i += 1) {
      expect(commits[i].author.timestamp).toBeGreaterThan(commits[i - 1].author.timestamp);
      const before = new Map((await listBlobsAt(root, commits[i - 1].oid, '')).map((b) => [b.path, b.oid]));
      const changed = (await listBlobsAt(root, commits[i].oid, '')).filter((b) => before.get(b.path) !== b.oid).map((b) => b.path);
      expect(changed, commits[i].message).toEqual([...HISTORY[i][1]]);
    }
  });

  it('gives the same commits on every run', async () => {
    const again = path.join(parent, 'again');
    const result = await errata(parent, ['init', '--demo', again]);
    expect(result.code).toBe(0);
    expect((await commitLog(again)).map((c) => c.oid)).toEqual((await commitLog(root)).map((c) => c.oid));
  });
});
