import { execFile } from 'node:child_process';
import { chmodSync, existsSync, readdirSync, statSync } from 'node:fs';
import path from 'node:path';
import { promisify } from 'node:util';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CLI, commit, errata, makeProject, removeDir, writeFiles, type CliResult } from '../helpers/project.js';

/**
 * Commands that only read (diff, check, profile, review) must work in a checkout errata cannot write
 * to (a CI job's read-only mount): they run without the lock and the cache, with scratch space in the
 * system's temporary folder. The checkout is made read-only for real: its files lose write permission,
 * and when the tests run as root (whom permissions do not stop) the command runs as user "nobody".
 */

const run = promisify(execFile);
const NOBODY = 65_534; // the conventional uid and gid of "nobody" on Linux (common practice)
const asRoot = process.getuid?.() === 0;

let root: string;
let reference: string;

/** Set every file and folder under `dir` to `mode` (folders also get search permission). */
function chmodTree(dir: string, fileMode: number, dirMode: number): void {
  chmodSync(dir, dirMode);
  for (const name of readdirSync(dir)) {
    const full = path.join(dir, name);
    if (statSync(full).isDirectory()) chmodTree(full, fileMode, dirMode);
    else chmodSync(full, fileMode);
  }
}

async function readOnlyErrata(args: string[]): Promise<CliResult> {
  try {
    const { stdout, stderr } = await run(process.execPath, [CLI, ...args], {
      cwd: root,
      env: { ...process.env, NO_COLOR: '1', HOME: '/tmp' },
      ...(asRoot ? { uid: NOBODY, gid: NOBODY } : {}),
    });
    return { code: 0, stdout, stderr };
  } catch (error) {
    const e = error as { code?: number; stdout?: string; stderr?: string };
    return { code: typeof e.code === 'number' ? e.code : -1, stdout: e.stdout ?? '', stderr: e.stderr ?? '' };
  }
}

beforeAll(async () => {
  root = await makeProject({
    'errata.yaml': 'tables:\n  t:\n    raw: raw/t/\n    key: id\n',
    'codebook/t.yaml': 'fields:\n  - name: x\n    type: string\n    constraints: { enum: [a, b, c] }\n',
    'raw/t/2026-01.csv': 'id,x\n1,a\n2,b\n',
  });
  writeFiles(root, { 'raw/t/2026-02.csv': 'id,x\n1,a\n2,c\n3,d\n' });
  await commit(root, 'Second delivery');
  reference = (await errata(root, ['diff', 'HEAD~1..HEAD', '--format', 'json', '--summary'])).stdout;
  removeDir(path.join(root, '.errata'));
  chmodTree(root, 0o444, 0o555);
});
afterAll(() => {
  chmodTree(root, 0o644, 0o755);
  removeDir(root);
});

describe('in a read-only checkout', () => {
  it('diff between commits gives the same answer as in a writable one', async () => {
    const result = await readOnlyErrata(['diff', 'HEAD~1..HEAD', '--format', 'json', '--summary']);
    expect(result.code, result.stderr).toBe(0);
    expect(result.stdout).toBe(reference);
    expect(JSON.parse(result.stdout).rows).toMatchObject({ added: 1, changed: 1 });
  });

  it.each([['check'], ['profile'], ['review', 'HEAD~1..HEAD']])('%s runs to its answer', async (...args) => {
    const result = await readOnlyErrata(args);
    expect([0, 1], result.stderr).toContain(result.code);
    expect(result.stderr).not.toContain('internal error');
  });

  it('build, which must write, says why it cannot, and nothing appears in the checkout', async () => {
    const result = await readOnlyErrata(['build']);
    expect(result.code).toBe(2);
    expect(result.stderr).toMatch(/^error: .*lock file/m);
    expect(existsSync(path.join(root, '.errata'))).toBe(false);
    expect(existsSync(path.join(root, 'clean'))).toBe(false);
  });
});
