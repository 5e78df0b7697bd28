import { cpSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { Session } from '../../src/engine/session.js';
import { loadFile } from '../../src/engine/load-table.js';
import { commitAll, initRepo } from '../../src/git/repo.js';
import { AUTHOR, REPO_ROOT, errata, removeDir, tempDir } from '../helpers/project.js';

const fixture = (name: string) => path.join(REPO_ROOT, 'fixtures', name);

async function loadError(file: string): Promise<{ code?: string; line?: number }> {
  const session = await Session.open();
  try {
    await loadFile(session, { name: file, localPath: fixture(file), format: 'csv' }, 't');
    return {};
  } catch (error) {
    const e = error as { code?: string; data?: { line?: number } };
    return { code: e.code, line: e.data?.line };
  } finally {
    session.close();
  }
}

describe('committed fixture files', () => {
  it.each([
    ['csv/ragged-row-line-3.csv', 'CSV_MALFORMED', 3],
    ['csv/unclosed-quote-line-3.csv', 'CSV_MALFORMED', 3],
    ['csv/latin1-line-3.csv', 'ENCODING', 3],
    ['csv/duplicate-header.csv', 'CSV_HEADER', 1],
  ])('%s is refused as %s at line %i', async (file, code, line) => {
    expect(await loadError(file)).toEqual({ code, line });
  });

  it('reads a file with a byte-order mark and CRLF line ends, keeping "" apart from missing', async () => {
    const session = await Session.open();
    try {
      await loadFile(session, { name: 'bom-crlf.csv', localPath: fixture('csv/bom-crlf.csv'), format: 'csv' }, 't');
      const rows = await session.all('SELECT * FROM t ORDER BY id');
      expect(rows).toEqual([
        { id: '1', label: 'a, b' },
        { id: '2', label: '' },
        { id: '3', label: null },
      ]);
    } finally {
      session.close();
    }
  });

  it('the small project builds to the values worked out by hand', async () => {
    const root = tempDir();
    try {
      cpSync(fixture('project-small'), root, { recursive: true });
      await initRepo(root);
      await commitAll(root, 'Fixture project', AUTHOR);
      const result = await errata(root, ['build']);
      expect(result.code).toBe(0);
      // age 99 → missing; 64 in × 2.54 = 162.56 → 162.6 (inch = 2.54 cm exactly, NIST SP 811);
      // smoker 1 → yes, 2 → no, 9 → missing.
      expect(readFileSync(path.join(root, 'clean/visits.csv'), 'utf8')).toBe('id,age,height_cm,smoker\n1,34,170,no\n2,,162.6,yes\n3,51,181,\n');
    } finally {
      removeDir(root);
    }
  });
});
