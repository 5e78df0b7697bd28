import { readdirSync, readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { diffRevisions } from '../../src/diff/revision-diff.js';
import { RevisionTree } from '../../src/git/tree.js';
import { commit, errata, makeProject, removeDir, tempDir, writeFiles } from '../helpers/project.js';

/**
 * A repeated revision diff is read back from .errata/cache/diffs instead of being built again. Two
 * invented deliveries; the second adds one row (worked out by hand: rows added 1, one cell changed).
 */
const FIRST = 'id,score\n1,10\n2,20\n';
const SECOND = 'id,score\n1,10\n2,21\n3,30\n';

describe('the diff cache', () => {
  let root: string;
  beforeAll(async () => {
    root = await makeProject({ 'errata.yaml': 'tables:\n  scores:\n    raw: raw/scores/delivery.csv\n    key: id\n', 'raw/scores/delivery.csv': FIRST });
    writeFiles(root, { 'raw/scores/delivery.csv': SECOND });
    await commit(root, 'Second delivery');
  });
  afterAll(() => removeDir(root));

  const summary = async (range: string, extra: string[] = []) => {
    const result = await errata(root, ['diff', range, '--format', 'json', '--summary', ...extra]);
    expect(result.stderr).toBe('');
    return JSON.parse(result.stdout) as { rows: { added: number }; cells: { changed: number } };
  };

  it('serves a repeated diff of the same inputs from one entry, and a different question from another', async () => {
    const dir = path.join(root, '.errata', 'cache', 'diffs');
    expect(await summary('HEAD~1..HEAD')).toMatchObject({ rows: { added: 1 }, cells: { changed: 1 } });
    const entries = readdirSync(dir).filter((f) => f.endsWith('.json'));
    expect(entries).toHaveLength(1);
    // Prove the entry is what is read: change the answer it holds and see it come back.
    const file = path.join(dir, entries[0]);
    const cached = JSON.parse(readFileSync(file, 'utf8'));
    cached.diffs[0].summary.rows.added = 99;
    writeFileSync(file, JSON.stringify(cached));
    expect((await summary('HEAD~1..HEAD')).rows.added).toBe(99);
    // A different tolerance is a different question: a new entry, computed afresh.
    expect((await summary('HEAD~1..HEAD', ['--tolerance', '5'])).cells.changed).toBe(0);
    expect(readdirSync(dir).filter((f) => f.endsWith('.json'))).toHaveLength(2);
    // An unreadable entry is computed again, never trusted.
    writeFileSync(file, '{"diffs": [');
    expect((await summary('HEAD~1..HEAD')).rows.added).toBe(1);
  });

  it('finds a cached answer before loading either delivery', async () => {
    const blobs = path.join(root, '.errata', 'cache', 'blobs');
    const cacheDir = tempDir('errata-diff-cache-');
    try {
      const ends = { base: await RevisionTree.at(root, 'HEAD~1', blobs), head: await RevisionTree.at(root, 'HEAD', blobs) };
      const run = async () => {
        const phases: string[] = [];
        const result = await diffRevisions({ ...ends, workDir: path.join(cacheDir, 'work'), diffCache: { dir: path.join(cacheDir, 'diffs') }, onProgress: (e) => phases.push(e.phase) });
        return { result, phases };
      };
      const first = await run();
      expect(first.phases.filter((p) => p === 'load')).toHaveLength(2);
      expect(first.result.diffs[0].summary.rows.added).toBe(1);
      const second = await run();
      expect(second.phases).toEqual([]);
      expect(second.result).toEqual(first.result);
    } finally {
      removeDir(cacheDir);
    }
  });
});
