import { readFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { buildProject } from '../../src/build/build-project.js';
import { WorkingTree } from '../../src/git/tree.js';
import { errata, makeProject, removeDir, tempDir, writeFiles } from '../helpers/project.js';

/**
 * Type detection looks at every value of a column. A column takes a type only when every value fits
 * it; values that do not fit keep the column as text and are reported, and detection never changes
 * how a delivered value is written.
 */

const CONFIG = 'tables:\n  t:\n    raw: raw/t/\n    key: id\n';
const roots: string[] = [];
afterAll(() => roots.forEach(removeDir));

async function cliBuild(files: Record<string, string>) {
  const root = await makeProject({ 'errata.yaml': CONFIG, ...files }, { commit: false });
  roots.push(root);
  const result = await errata(root, ['build']);
  const csv = result.code === 0 ? readFileSync(path.join(root, 'clean', 't.csv'), 'utf8') : null;
  return { result, csv };
}

/** Build in-process: the clean table's column types and the columns reported as not fitting. */
async function typesAfterBuild(files: Record<string, string>) {
  const root = tempDir();
  roots.push(root);
  writeFiles(root, { 'errata.yaml': CONFIG, ...files });
  const build = await buildProject({ tree: new WorkingTree(root), workDir: path.join(root, '.errata', 'tmp') });
  try {
    const table = build.tables[0];
    return {
      types: Object.fromEntries(table.columns.map((c) => [c.name, c.type])),
      problems: table.typeProblems.map((p) => ({ column: p.column, misfits: p.misfits, values: p.examples.map((e) => e.value) })),
    };
  } finally {
    build.session.close();
  }
}

describe('detection over the whole file', () => {
  it('a bad value in the very last of 100,000 rows keeps the column text and is reported', async () => {
    // 99,999 whole numbers, then "1O" (letter O for zero) in row 100,000.
    const rows: string[] = ['id,count'];
    for (let i = 1; i < 100_000; i += 1) rows.push(`${i},${i % 97}`);
    rows.push('100000,1O');
    const { result, csv } = await cliBuild({ 'raw/t/delivery.csv': rows.join('\n') + '\n' });
    expect(result.code, result.stderr).toBe(0);
    const warning = result.stderr.split('\n').find((line) => line.startsWith('warning:'));
    expect(warning).toBeDefined();
    expect(warning).toContain('t.count');
    expect(warning).toContain('100000: 1O');
    expect(warning).toMatch(/stays text/);
    const lines = csv!.trimEnd().split('\n');
    expect(lines).toHaveLength(100_001);
    // 1 % 97 = 1; 98 % 97 = 1; 99,999 % 97 = 99,999 − 97 × 1030 = 99,999 − 99,910 = 89.
    expect(lines[1]).toBe('1,1');
    expect(lines[98]).toBe('98,1');
    expect(lines[99_999]).toBe('99999,89');
    expect(lines[100_000]).toBe('100000,1O');
  });

  it('codes with leading zeros and decimals such as 1.50 keep their exact text', async () => {
    const raw = 'id,code,dose,zip\n1,007,1.50,02134\n2,012,2.25,10001\n3,100,0.5,00501\n';
    const { result, csv } = await cliBuild({ 'raw/t/delivery.csv': raw });
    expect(result.code, result.stderr).toBe(0);
    expect(csv).toBe(raw);
  });

  it('whole numbers in a column of decimals keep the text they were delivered in', async () => {
    // 80 and 64 are whole; 70.5 is not. Read as numbers the column is fine, but the clean file must
    // still say 80, not 80.0, for cells no correction touched.
    const raw = 'id,weight\n1,70.5\n2,80\n3,64\n';
    const { result, csv } = await cliBuild({ 'raw/t/delivery.csv': raw });
    expect(result.code, result.stderr).toBe(0);
    expect(csv).toBe(raw);
  });

  it('a column of whole numbers, decimals that print back exactly, true/false and dates each takes its type', async () => {
    const { types, problems } = await typesAfterBuild({
      'raw/t/delivery.csv': 'id,n,x,flag,seen,code\n1,3,1.25,true,2024-02-29,007\n2,-4,2,FALSE,2023-12-31,7\n',
    });
    expect(types).toEqual({ id: 'BIGINT', n: 'BIGINT', x: 'DOUBLE', flag: 'BOOLEAN', seen: 'DATE', code: 'VARCHAR' });
    expect(problems).toEqual([]);
  });
});

describe('declared types', () => {
  const codebook = ['fields:', '  - name: id', '    type: integer', '  - name: visits', '    type: integer', ''].join('\n');
  const raw = 'id,visits\n1,3\n2,2.5\n3,4\n';

  it('a codebook-declared integer column with a non-integer value stays text and is reported', async () => {
    const { result, csv } = await cliBuild({ 'codebook/t.yaml': codebook, 'raw/t/delivery.csv': raw });
    expect(result.code, result.stderr).toBe(0);
    expect(csv).toBe(raw);
    const warning = result.stderr.split('\n').find((line) => line.includes('t.visits'));
    expect(warning).toBeDefined();
    expect(warning).toMatch(/declared integer/);
    expect(warning).toContain('codebook/t.yaml');
    expect(warning).toContain('2: 2.5');

    const { types, problems } = await typesAfterBuild({ 'codebook/t.yaml': codebook, 'raw/t/delivery.csv': raw });
    expect(types.visits).toBe('VARCHAR');
    expect(problems).toEqual([{ column: 'visits', misfits: 1, values: ['2.5'] }]);
  });

  it('after a correction fixes the value that did not fit, the declared column becomes an integer', async () => {
    const correction = 'reason: The site confirmed 2 visits\nsteps:\n  - edit:\n      - { key: 2, column: visits, from: "2.5", to: "2" }\n';
    const files = { 'codebook/t.yaml': codebook, 'raw/t/delivery.csv': raw, 'corrections/t/0001-visits.yaml': correction };
    const { types, problems } = await typesAfterBuild(files);
    expect(types.visits).toBe('BIGINT');
    expect(problems).toEqual([]);

    const { result, csv } = await cliBuild(files);
    expect(result.code, result.stderr).toBe(0);
    expect(result.stderr).not.toContain('warning');
    expect(csv).toBe('id,visits\n1,3\n2,2\n3,4\n');
  });

  it('after a correction makes a sentinel missing, a mostly-integer column becomes an integer', async () => {
    // 19 whole numbers and one "unknown": 19 of 20 fit (95 %), so the column is reported while text.
    const rows = ['id,age'];
    for (let i = 1; i <= 19; i += 1) rows.push(`${i},${20 + i}`);
    rows.push('20,unknown');
    const raw = rows.join('\n') + '\n';
    const before = await typesAfterBuild({ 'raw/t/delivery.csv': raw });
    expect(before.types.age).toBe('VARCHAR');
    expect(before.problems).toEqual([{ column: 'age', misfits: 1, values: ['unknown'] }]);

    const after = await typesAfterBuild({
      'raw/t/delivery.csv': raw,
      'corrections/t/0001-unknown-age.yaml': 'reason: unknown means not asked\nsteps:\n  - missing: { column: age, values: [unknown] }\n',
    });
    expect(after.types.age).toBe('BIGINT');
    expect(after.problems).toEqual([]);
  });
});
