import { execFileSync } from 'node:child_process';
import { readFileSync, readdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { commit, errata, makeProject, removeDir, tempDir, writeFiles } from '../helpers/project.js';

/**
 * Three commits: a first delivery; a correction (decimal slip) ; a second delivery that adds a row,
 * drops one and changes a cell. Every expected figure below is worked out by hand from these files.
 */
const FIRST = 'id,weight_kg,site\n1,70.5,north\n2,7.12,south\n3,80.1,north\n';
const SECOND = 'id,weight_kg,site\n1,70.5,north\n2,7.12,south\n4,66.1,east\n5,90.2,south\n';

describe('diff between commits', () => {
  let root: string;
  let bare: string;
  beforeAll(async () => {
    root = await makeProject({
      'errata.yaml': 'tables:\n  people:\n    raw: raw/people\n    key: id\n',
      'raw/people/2026-01-delivery.csv': FIRST,
    });
    writeFiles(root, {
      'corrections/people/0001-decimal.yaml': 'reason: decimal slip\nsteps:\n  - edit:\n      - { key: 2, column: weight_kg, from: 7.12, to: 71.2 }\n',
    });
    await commit(root, 'Fix a decimal slip');
    writeFiles(root, { 'raw/people/2026-02-delivery.csv': SECOND });
    await commit(root, 'Second delivery');
    bare = tempDir();
    execFileSync('git', ['clone', '-q', '--bare', root, path.join(bare, 'p.git')]);
  });
  afterAll(() => {
    removeDir(root);
    removeDir(bare);
  });

  const summary = async (cwd: string, range: string, extra: string[] = []) => {
    const result = await errata(cwd, ['diff', range, '--format', 'json', '--summary', ...extra]);
    expect(result.stderr).toBe('');
    return JSON.parse(result.stdout);
  };

  it('first to second commit: the correction changes one cell and names itself', async () => {
    expect(await summary(root, 'HEAD~2..HEAD~1')).toEqual({
      rows: { added: 0, removed: 0, changed: 1, unchanged: 2 },
      cells: { changed: 1 },
      columns: { added: [], removed: [], retyped: [] },
    });
    const full = JSON.parse((await errata(root, ['diff', 'HEAD~2..HEAD~1', '--format', 'json'])).stdout);
    expect(full.tables[0].cells).toEqual([{ key: '2', column: 'weight_kg', old: '7.12', new: '71.2', correction: '0001-decimal.yaml' }]);
  });

  it('second to third commit: the new delivery adds two rows and removes one, the correction still applies', async () => {
    // Rows 4 and 5 are new, row 3 is gone; row 2 is corrected on both sides, so it is unchanged.
    expect(await summary(root, 'HEAD~1..HEAD')).toEqual({
      rows: { added: 2, removed: 1, changed: 0, unchanged: 2 },
      cells: { changed: 0 },
      columns: { added: [], removed: [], retyped: [] },
    });
  });

  it('first to third commit, and --raw compares the deliveries as delivered', async () => {
    expect(await summary(root, 'HEAD~2..HEAD')).toEqual({
      rows: { added: 2, removed: 1, changed: 1, unchanged: 1 },
      cells: { changed: 1 },
      columns: { added: [], removed: [], retyped: [] },
    });
    // Raw: the 7.12 is the same in both deliveries, so only rows differ.
    expect(await summary(root, 'HEAD~2..HEAD', ['--raw'])).toEqual({
      rows: { added: 2, removed: 1, changed: 0, unchanged: 2 },
      cells: { changed: 0 },
      columns: { added: [], removed: [], retyped: [] },
    });
  });

  it('a revision against the working tree, with --exit-code', async () => {
    writeFileSync(path.join(root, 'corrections/people/0002-site.yaml'), 'reason: site renamed\nsteps:\n  - recode: { column: site, map: { east: eastern } }\n');
    try {
      const result = await errata(root, ['diff', 'HEAD', '--exit-code']);
      expect(result.code).toBe(1);
      expect(result.stdout).toContain('site: east → eastern');
      expect(result.stdout).toContain('[0002-site.yaml]');
    } finally {
      removeDir(path.join(root, 'corrections/people/0002-site.yaml'));
    }
    expect((await errata(root, ['diff', 'HEAD', '--exit-code'])).code).toBe(0);
  });

  it('gives the same answers in a bare clone', async () => {
    const dir = path.join(bare, 'p.git');
    for (const range of ['HEAD~2..HEAD~1', 'HEAD~1..HEAD', 'HEAD~2..HEAD']) {
      expect(await summary(dir, range)).toEqual(await summary(root, range));
    }
  });

  it('caches parsed deliveries by blob id so a repeated diff does not parse them again', async () => {
    const cache = path.join(root, '.errata/cache/tables');
    const blobs = ['raw/people/2026-01-delivery.csv', 'raw/people/2026-02-delivery.csv'].map((f) =>
      execFileSync('git', ['rev-parse', `HEAD:${f}`], { cwd: root, encoding: 'utf8' }).trim(),
    );
    await summary(root, 'HEAD~2..HEAD');
    const entries = readdirSync(cache);
    for (const blob of blobs) expect(entries.some((e) => e.startsWith(blob))).toBe(true);
    // Prove the cache is what is read: put the first delivery's entry in place of the second's, and the
    // two rows the second delivery adds disappear from the diff. (A damaged entry is parsed again
    // instead, see tests/safety/cache-faults.test.ts.)
    const entry = entries.find((e) => e.startsWith(blobs[1]))!;
    const first = entries.find((e) => e.startsWith(blobs[0]))!;
    writeFileSync(path.join(cache, entry), readFileSync(path.join(cache, first)));
    // Finished diffs are cached too (tests/diff/diff-cache.test.ts); without them the parse cache is read.
    removeDir(path.join(root, '.errata/cache/diffs'));
    expect((await summary(root, 'HEAD~1..HEAD')).rows.added).toBe(0);
    removeDir(path.join(cache, entry));
    removeDir(path.join(root, '.errata/cache/diffs'));
    expect((await summary(root, 'HEAD~1..HEAD')).rows.added).toBe(2);
  });

  it('markdown fits a pull-request comment', async () => {
    const markdown = (await errata(root, ['diff', 'HEAD~2..HEAD', '--format', 'markdown'])).stdout;
    expect(markdown).toContain('| people | 1 | 1 | 2 | 1 |');
    expect(markdown).toContain('| 2 | weight\\_kg | 7.12 | 71.2 | 0001-decimal.yaml |');
  });
});

describe('git-setup', () => {
  it('makes plain git diff show cell changes of a data file, and --undo removes it', async () => {
    const root = await makeProject({
      'errata.yaml': 'tables:\n  people:\n    raw: raw/people\n    key: id\n',
      'raw/people/d.csv': FIRST,
    });
    try {
      expect((await errata(root, ['git-setup'])).code).toBe(0);
      writeFileSync(path.join(root, 'raw/people/d.csv'), FIRST.replace('80.1', '81.1'));
      const shown = execFileSync('git', ['diff'], { cwd: root, encoding: 'utf8', env: { ...process.env, NO_COLOR: '1' } });
      expect(shown).toContain('weight_kg: 80.1 → 81.1');
      expect((await errata(root, ['git-setup', '--undo'])).code).toBe(0);
      const plain = execFileSync('git', ['diff'], { cwd: root, encoding: 'utf8' });
      expect(plain).toContain('-3,80.1,north');
      expect(execFileSync('git', ['config', '--get-regexp', '^diff\\.', '--local'], { cwd: root, encoding: 'utf8', stdio: ['ignore', 'pipe', 'ignore'] }).trim()).toBe('');
    } catch (error) {
      // git config --get-regexp exits 1 when nothing matches: that is the expected outcome.
      if ((error as { status?: number }).status !== 1) throw error;
    } finally {
      removeDir(root);
    }
  });
});

describe('diff --files and scratch space', () => {
  it('inside a project spills under .errata/tmp in a folder of its own, removed afterwards with any a killed diff left; outside one it leaves nothing behind', async () => {
    const root = await makeProject({ 'errata.yaml': 'tables:\n  people:\n    raw: raw/people\n    key: id\n' });
    const outside = tempDir();
    try {
      for (const dir of [root, outside]) writeFiles(dir, { 'old.csv': FIRST, 'new.csv': SECOND });
      // What a killed diff leaves: a spill folder named by a process that is gone (pid 999999999).
      writeFiles(root, { '.errata/tmp/errata-spill-999999999/duckdb.tmp': 'x' });
      for (const cwd of [root, outside]) {
        const result = await errata(cwd, ['diff', '--files', 'old.csv', 'new.csv', '--key', 'id', '--format', 'json', '--summary']);
        expect(result.stderr).toBe('');
        // By hand: id 3 removed, ids 4 and 5 added, ids 1 and 2 the same.
        expect(JSON.parse(result.stdout).rows).toEqual({ added: 2, removed: 1, changed: 0, unchanged: 2 });
      }
      expect(readdirSync(path.join(root, '.errata', 'tmp')).filter((name) => name.startsWith('errata-spill-'))).toEqual([]);
      expect(readdirSync(outside).sort()).toEqual(['new.csv', 'old.csv']);
    } finally {
      removeDir(root);
      removeDir(outside);
    }
  });

  it('diffs two long deliveries in much the same order and reports exactly what was planted in them', async () => {
    // About 11 MB each, so the old file is counted in two halves on two threads. Planted by this test:
    // every 997th row has a changed value in a, every 1009th row is removed, a new row follows every
    // 1301st, and c holds a text only in row 150,000 (in the second half), which the new delivery
    // corrects to a number: c goes from text to integer.
    const dir = tempDir();
    try {
      const rows = 200_000;
      const line = (i: number, a: number, c: string) => `R${String(i).padStart(7, '0')},${a},${(i % 40) / 4},${c},2021-0${1 + (i % 9)}-1${i % 10},alpha beta gamma ${i % 13}`;
      const oldLines = ['id,a,b,c,d,t'];
      const newLines = ['id,a,b,c,d,t'];
      let changed = 0;
      let removed = 0;
      let added = 0;
      for (let i = 1; i <= rows; i += 1) {
        const c = i === 150_000 ? 'n/a' : String(i % 5);
        oldLines.push(line(i, i % 100, c));
        if (i % 1009 === 0) {
          removed += 1;
          continue;
        }
        const edited = i % 997 === 0;
        if (edited || i === 150_000) changed += 1;
        newLines.push(line(i, edited ? 1000 + i : i % 100, i === 150_000 ? '7' : c));
        if (i % 1301 === 0) {
          added += 1;
          newLines.push(line(rows + i, 1, '1'));
        }
      }
      writeFiles(dir, { 'old.csv': oldLines.join('\n') + '\n', 'new.csv': newLines.join('\n') + '\n' });
      const result = await errata(dir, ['diff', '--files', 'old.csv', 'new.csv', '--key', 'id', '--format', 'json']);
      expect(result.stderr).toBe('');
      const [table] = JSON.parse(result.stdout).tables;
      expect(table.summary).toEqual({
        rows: { added, removed, changed, unchanged: rows - removed - changed },
        cells: { changed },
        columns: { added: [], removed: [], retyped: ['c'] },
      });
      expect(table.retyped).toEqual([{ column: 'c', from: 'string', to: 'integer' }]);
      expect(table.cells.find((cell: { key: string }) => cell.key === 'R0150000')).toEqual({ key: 'R0150000', column: 'c', old: 'n/a', new: '7' });

      // Row 10 (unchanged, so in a run of identical lines) again at the end of NEW, and row 20 again
      // at the end of OLD: only the scan's key check sees these repeats (on its own thread for files
      // this long), and the engine then names each key in the file the user gave.
      writeFiles(dir, { 'new-repeat.csv': `${newLines.join('\n')}\n${line(10, 10, '0')}\n`, 'old-repeat.csv': `${oldLines.join('\n')}\n${line(20, 20, '0')}\n` });
      for (const [oldFile, newFile, key, file] of [
        ['old.csv', 'new-repeat.csv', 'R0000010', 'new-repeat.csv'],
        ['old-repeat.csv', 'new.csv', 'R0000020', 'old-repeat.csv'],
      ]) {
        const repeated = await errata(dir, ['diff', '--files', oldFile, newFile, '--key', 'id', '--format', 'json', '--summary']);
        expect(repeated.code).not.toBe(0);
        expect(repeated.stdout).toBe('');
        expect(repeated.stderr).toContain(`${key} (2 rows`);
        expect(repeated.stderr).toContain(file);
      }
    } finally {
      removeDir(dir);
    }
  }, 120_000);
});
