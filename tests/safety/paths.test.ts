import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, symlinkSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/project/config.js';
import { ErrataError } from '../../src/errors.js';
import { commit, errata, makeProject, removeDir, tempDir } from '../helpers/project.js';

/**
 * Paths come from pull requests too. A path in errata.yaml must stay inside the repository, and no
 * project file may be reached through a symbolic link, neither in the working tree nor at a commit
 * (git stores a link as a mode 120000 blob holding its target).
 */

const CONFIG = 'tables:\n  t:\n    raw: raw/t/\n    key: id\n';
let outside: string;
let secret: string;

beforeAll(() => {
  outside = tempDir('errata-outside-');
  secret = `SECRET-${randomBytes(8).toString('hex')}`;
  mkdirSync(path.join(outside, 't'));
  writeFileSync(path.join(outside, 't', 'delivery.csv'), `id,secret\n1,${secret}\n`);
});
afterAll(() => removeDir(outside));

describe('paths in errata.yaml', () => {
  it.each([
    ['a parent folder', '../elsewhere/'],
    ['a parent folder in the middle', 'raw/../../elsewhere'],
    ['an absolute path', '/etc/'],
    ['a home folder', '~/data'],
    ['a drive letter', 'C:/data'],
    ['a backslash', 'raw\\..\\..\\x'],
  ])('refuses %s with PATH_OUTSIDE at its line', (_what, raw) => {
    let error: unknown = null;
    try {
      parseConfig(`tables:\n  t:\n    key: id\n    raw: ${JSON.stringify(raw)}\n`);
    } catch (e) {
      error = e;
    }
    expect(error).toBeInstanceOf(ErrataError);
    expect((error as ErrataError).code).toBe('PATH_OUTSIDE');
    expect((error as ErrataError).data).toMatchObject({ file: 'errata.yaml', line: 4 });
  });
});

describe('symbolic links', () => {
  it('a raw file that is a link out of the repository is refused in the working tree', async () => {
    const root = await makeProject({ 'errata.yaml': CONFIG }, { commit: false });
    try {
      mkdirSync(path.join(root, 'raw', 't'), { recursive: true });
      symlinkSync(path.join(outside, 't', 'delivery.csv'), path.join(root, 'raw', 't', 'delivery.csv'));
      const result = await errata(root, ['build']);
      expect(result.code).toBe(2);
      expect(result.stderr).toContain('raw/t/delivery.csv is reached through a symbolic link');
      expect(result.stdout + result.stderr).not.toContain(secret);
      expect(existsSync(path.join(root, 'clean'))).toBe(false);
    } finally {
      removeDir(root);
    }
  });

  it('a raw/ folder that is a link out of the repository is refused', async () => {
    const root = await makeProject({ 'errata.yaml': CONFIG }, { commit: false });
    try {
      symlinkSync(outside, path.join(root, 'raw'));
      const result = await errata(root, ['profile', '--format', 'json']);
      expect(result.code).toBe(2);
      expect(result.stderr).toMatch(/raw\/t\/? is reached through a symbolic link|raw is reached through a symbolic link/);
      expect(result.stdout + result.stderr).not.toContain(secret);
    } finally {
      removeDir(root);
    }
  });

  it('a link committed to git is refused when reading that commit', async () => {
    const root = await makeProject({ 'errata.yaml': CONFIG, 'raw/t/0-first.csv': 'id,x\n1,2\n' });
    const out = tempDir('errata-out-');
    try {
      symlinkSync(path.join(outside, 't', 'delivery.csv'), path.join(root, 'raw', 't', 'delivery.csv'));
      await commit(root, 'Add a link');
      // The commit really holds a link (mode 120000), as `git ls-tree` shows.
      const { execFileSync } = await import('node:child_process');
      expect(execFileSync('git', ['ls-tree', '-r', 'HEAD', 'raw/t/delivery.csv'], { cwd: root, encoding: 'utf8' })).toMatch(/^120000 /);
      const result = await errata(root, ['build', '--rev', 'HEAD', '--out', out]);
      expect(result.code).toBe(2);
      expect(result.stderr).toContain('raw/t/delivery.csv is a symbolic link at');
      expect(result.stdout + result.stderr).not.toContain(secret);
      expect(existsSync(path.join(out, 'clean'))).toBe(false);
    } finally {
      removeDir(root);
      removeDir(out);
    }
  });

  it('a committed raw/ folder that is a link is refused when reading that commit', async () => {
    const root = await makeProject({ 'errata.yaml': CONFIG, 'README.md': 'x\n' });
    const out = tempDir('errata-out-');
    try {
      symlinkSync(outside, path.join(root, 'raw'));
      await commit(root, 'Add a linked folder');
      const result = await errata(root, ['build', '--rev', 'HEAD', '--out', out]);
      expect(result.code).toBe(2);
      expect(result.stderr).toMatch(/raw(\/t)? is a symbolic link at/);
      expect(result.stdout + result.stderr).not.toContain(secret);
    } finally {
      removeDir(root);
      removeDir(out);
    }
  });
});
