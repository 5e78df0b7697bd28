import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { chmodSync, cpSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { deflateSync } from 'node:zlib';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { resolveRevision } from '../../src/git/repo.js';
import { RevisionTree, WorkingTree, gitBlobIdOf } from '../../src/git/tree.js';
import { hashOfFile } from '../../src/file-hash.js';
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

  it('hashes files below, at and above the 4 MiB read size as git and a one-shot hash do', async () => {
    const dir = tempDir();
    const tree = new WorkingTree(dir);
    for (const size of [0, 5, (4 << 20) - 1, 4 << 20, (4 << 20) + 1, 9 * (1 << 20) + 7]) {
      const name = `f${size}.csv`;
      const bytes = Buffer.alloc(size);
      for (let i = 0; i < size; i++) bytes[i] = (i * 7919 + (i >> 13)) & 0xff;
      writeFileSync(path.join(dir, name), bytes);
      // git hash-object is the reference for a blob id; node:crypto over the whole buffer for SHA-256.
      const gitHash = execFileSync('git', ['hash-object', name], { cwd: dir, encoding: 'utf8' }).trim();
      expect(await tree.blobId(name), `blob id of ${size} bytes`).toBe(gitHash);
      expect(await hashOfFile(path.join(dir, name), 'sha256'), `SHA-256 of ${size} bytes`).toBe(createHash('sha256').update(bytes).digest('hex'));
    }
    removeDir(dir);
  });

  it('unpacks a delivery at a commit byte for byte as git does, loose or packed, and refuses a damaged object', async () => {
    // git cat-file is the independent reference for a blob's content.
    const gitContent = execFileSync('git', ['cat-file', 'blob', 'HEAD:raw/t/a.csv'], { cwd: root });
    const packed = path.join(tempDir(), 'packed.git');
    execFileSync('git', ['clone', '-q', '--bare', root, packed]);
    execFileSync('git', ['gc', '-q', '--prune=now'], { cwd: packed });
    // Every object is in the pack now: no loose-object folders are left.
    expect(readdirSync(path.join(packed, 'objects')).filter((name) => /^[0-9a-f]{2}$/.test(name))).toEqual([]);
    for (const dir of [root, packed]) {
      const tree = await RevisionTree.at(dir, 'HEAD', path.join(tempDir(), 'blobs'));
      expect(readFileSync(await tree.localPath('raw/t/a.csv'))).toEqual(gitContent);
    }
    // The loose object of a.csv's blob swapped for another well-formed blob: its content no longer
    // hashes to its id.
    const damagedRoot = tempDir();
    cpSync(root, damagedRoot, { recursive: true });
    const oid = execFileSync('git', ['rev-parse', 'HEAD:raw/t/a.csv'], { cwd: root, encoding: 'utf8' }).trim();
    const objectFile = path.join(damagedRoot, '.git', 'objects', oid.slice(0, 2), oid.slice(2));
    chmodSync(objectFile, 0o644);
    writeFileSync(objectFile, deflateSync(Buffer.from('blob 6\0id\n1\n3\n')));
    const damaged = await RevisionTree.at(damagedRoot, 'HEAD', path.join(tempDir(), 'blobs'));
    await expect(damaged.localPath('raw/t/a.csv')).rejects.toMatchObject({ code: 'GIT', message: expect.stringContaining('does not hash to its id') });
    removeDir(damagedRoot);
    removeDir(path.dirname(packed));
  });
});
