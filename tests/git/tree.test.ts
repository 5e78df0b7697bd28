import { execFileSync } from 'node:child_process';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { resolveRevision } from '../../src/git/repo.js';
import { RevisionTree, WorkingTree, gitBlobIdOf } from '../../src/git/tree.js';
import { commit, makeProject, removeDir, tempDir, writeFiles } from '../helpers/project.js';

describe('reading the project at a revision', () => {
  let root: string;
  let bare: string;
  let first: string;
  let second: string;
  beforeAll(async () => {
    root = await makeProject({ 'raw/t/a.csv': 'id\n1\n', 'notes/n.md': 'x' });
    first = await resolveRevision(root, 'HEAD');
    writeFiles(root, { 'raw/t/a.csv': 'id\n1\n2\n', 'raw/t/b.csv': 'id\n3\n' });
    second = await commit(root, 'Second delivery');
    bare = tempDir();
    execFileSync('git', ['clone', '-q', '--bare', root, path.join(bare, 'p.git')]);
  });
  afterAll(() => {
    removeDir(root);
    removeDir(bare);
  });

  it('resolves HEAD, HEAD~1, branch names and abbreviated ids as git does', async () => {
    // git rev-parse is the independent reference for what a revision names.
    const gitSays = (rev: string) => execFileSync('git', ['rev-parse', rev], { cwd: root, encoding: 'utf8' }).trim();
    expect(await resolveRevision(root, 'HEAD')).toBe(gitSays('HEAD'));
    expect(await resolveRevision(root, 'HEAD~1')).toBe(gitSays('HEAD~1'));
    expect(await resolveRevision(root, 'main^')).toBe(gitSays('main^'));
    expect(await resolveRevision(root, second.slice(0, 8))).toBe(second);
    await expect(resolveRevision(root, 'no-such-branch')).rejects.toMatchObject({ code: 'REVISION_UNKNOWN' });
    await expect(resolveRevision(root, 'HEAD~5')).rejects.toMatchObject({ code: 'REVISION_UNKNOWN' });
  });

  it('reads files and lists folders at a commit without a checkout, also in a bare clone', async () => {
    for (const dir of [root, path.join(bare, 'p.git')]) {
      const old = await RevisionTree.at(dir, first, path.join(tempDir(), 'blobs'));
      expect((await old.read('raw/t/a.csv'))?.toString()).toBe('id\n1\n');
      expect(await old.list('raw/t')).toEqual(['raw/t/a.csv']);
      const now = await RevisionTree.at(dir, 'HEAD', path.join(tempDir(), 'blobs'));
      expect(await now.list('raw')).toEqual(['raw/t/a.csv', 'raw/t/b.csv']);
      expect(await now.read('raw/t/missing.csv')).toBeNull();
    }
  });

  it('gives the blob id git gives, for committed and working-tree files alike', async () => {
    const gitHash = execFileSync('git', ['hash-object', 'raw/t/a.csv'], { cwd: root, encoding: 'utf8' }).trim();
    expect(await new WorkingTree(root).blobId('raw/t/a.csv')).toBe(gitHash);
    const head = await RevisionTree.at(root, 'HEAD', path.join(tempDir(), 'blobs'));
    expect(await head.blobId('raw/t/a.csv')).toBe(gitHash);
    const emptyBlob = execFileSync('git', ['hash-object', '--stdin'], { input: '', encoding: 'utf8' }).trim();
    expect(gitBlobIdOf(new Uint8Array())).toBe(emptyBlob);
  });
});
