import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { restoreFormula } from '../../src/engine/formula-guard.js';
import { escapeHtml } from '../../src/render/html.js';
import { commit, errata, makeProject, removeDir, writeFiles } from '../helpers/project.js';

/**
 * Outputs are opened by people: clean CSV and audit-log CSV in spreadsheets, diff Markdown in a
 * pull-request page. A delivered or proposed value must show there as text, never run as a formula
 * (OWASP, "CSV Injection": cells beginning with = + - @ tab or CR) or render as markup.
 */

const RAW = ['id,name,score', '1,=1+1,-99', '2,@SUM(A1),5', "3,'quoted,7", '4,-2+3,8', '5,plain,-1.5', '6,"=HYPERLINK(""http://example.org"",""x"")",9'].join('\n') + '\n';

let root: string;
beforeAll(async () => {
  root = await makeProject({
    'errata.yaml': 'tables:\n  t:\n    raw: raw/t/\n    key: id\n',
    'raw/t/delivery.csv': RAW,
    'people.yaml': 'people:\n  - id: pi\n    name: P I\n    approves:\n      - table: t\n        columns: all\n',
    'notes/N-1.md': '---\nid: N-1\napprover: pi\ndate: 2026-01-03\napproves: names\n---\nok\n',
    'corrections/t/0001-name.yaml':
      'reason: "=HYPERLINK(\\"http://example.org\\") as a reason"\napproval: N-1\nsteps:\n  - edit:\n      - { key: 5, column: name, from: plain, to: "@cmd|x" }\n',
  });
});
afterAll(() => removeDir(root));

const sha = (file: string) => createHash('sha256').update(readFileSync(path.join(root, file))).digest('hex');

describe('the clean CSV', () => {
  it('writes text that a spreadsheet would run with one leading apostrophe, numbers untouched', async () => {
    expect((await errata(root, ['build'])).code).toBe(0);
    const csv = readFileSync(path.join(root, 'clean/t.csv'), 'utf8');
    expect(csv).toBe(
      [
        'id,name,score',
        "1,'=1+1,-99",
        "2,'@SUM(A1),5",
        "3,''quoted,7",
        "4,'-2+3,8",
        "5,'@cmd|x,-1.5",
        `6,"'=HYPERLINK(""http://example.org"",""x"")",9`,
      ].join('\n') + '\n',
    );
  });

  it('gives back the delivered text when one leading apostrophe is dropped', () => {
    const cells = readFileSync(path.join(root, 'clean/t.csv'), 'utf8').split('\n').slice(1, 5).map((line) => line.split(',')[1]);
    expect(cells.map(restoreFormula)).toEqual(['=1+1', '@SUM(A1)', "'quoted", '-2+3']);
  });

  it('rebuilds to the same bytes, and verify agrees with the committed outputs', async () => {
    const first = sha('clean/t.csv');
    const manifest = sha('clean/manifest.json');
    await commit(root, 'Build');
    expect((await errata(root, ['build'])).code).toBe(0);
    expect(sha('clean/t.csv')).toBe(first);
    expect(sha('clean/manifest.json')).toBe(manifest);
    const verify = await errata(root, ['verify']);
    expect(verify.code, verify.stdout + verify.stderr).toBe(0);
  });
});

describe('the audit log as CSV', () => {
  it('neutralises a reason written as a formula', async () => {
    const result = await errata(root, ['log', '--format', 'csv']);
    expect(result.code).toBe(0);
    expect(result.stdout).toContain(`"'=HYPERLINK(""http://example.org"") as a reason"`);
    expect(result.stdout).not.toMatch(/(^|,)"?=/m);
  });
});

describe('the diff as Markdown', () => {
  it('escapes pipes, backticks, tags and line breaks in values so the table keeps its shape', async () => {
    writeFiles(root, {
      'corrections/t/0002-markup.yaml':
        'reason: markup\napproval: N-1\nsteps:\n  - edit:\n      - { key: 2, column: name, from: "@SUM(A1)", to: "a|b`c<img src=x onerror=alert(1)>\\r\\nd&lt;e" }\n',
    });
    await commit(root, 'Markup');
    const result = await errata(root, ['diff', 'HEAD~1..HEAD', '--format', 'markdown']);
    expect(result.code, result.stderr).toBe(0);
    const row = result.stdout.split('\n').find((line) => line.startsWith('| 2 |'));
    expect(row).toBeDefined();
    // Key, column, old, new, correction: six unescaped pipes and no raw markup.
    expect(row!.match(/(?<!\\)\|/g)).toHaveLength(6);
    expect(row).not.toMatch(/(?<!\\)[<>`]/);
    expect(row).not.toMatch(/(?<!\\)&/);
    expect(result.stdout).not.toContain('\r');
  });
});

describe('HTML', () => {
  it('escapes the five characters HTML gives meaning to in text and attribute values', () => {
    // The five characters and their named references: HTML Living Standard, "Named character references".
    expect(escapeHtml(`<img src=x onerror="alert('1')">&`)).toBe('&lt;img src=x onerror=&quot;alert(&#39;1&#39;)&quot;&gt;&amp;');
  });
});
