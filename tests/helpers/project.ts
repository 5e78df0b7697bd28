import { execFile } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import { commitAll, initRepo } from '../../src/git/repo.js';

const run = promisify(execFile);
export const REPO_ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
export const CLI = path.join(REPO_ROOT, 'bin', 'errata.js');

/** A pinned author, so commit ids and dates in tests are exact. */
export const AUTHOR = { name: 'Test Author', email: 'author@example.org', timestamp: 1_767_225_600, timezoneOffset: 0 };

export interface CliResult {
  code: number;
  stdout: string;
  stderr: string;
}

/** Run the real command line (the built dist/) in `cwd`. */
export async function errata(cwd: string, args: string[], env: Record<string, string> = {}): Promise<CliResult> {
  try {
    const { stdout, stderr } = await run(process.execPath, [CLI, ...args], {
      cwd,
      env: { ...process.env, NO_COLOR: '1', ...env },
      maxBuffer: 64 * 1024 * 1024,
    });
    return { code: 0, stdout, stderr };
  } catch (error) {
    const e = error as { code?: number; stdout?: string; stderr?: string };
    return { code: typeof e.code === 'number' ? e.code : -1, stdout: e.stdout ?? '', stderr: e.stderr ?? '' };
  }
}

export function tempDir(prefix = 'errata-test-'): string {
  return mkdtempSync(path.join(tmpdir(), prefix));
}

/** Write files (path → content) under root, creating folders. */
export function writeFiles(root: string, files: Record<string, string | Buffer>): void {
  for (const [relative, content] of Object.entries(files)) {
    const full = path.join(root, relative);
    mkdirSync(path.dirname(full), { recursive: true });
    writeFileSync(full, content);
  }
}

/** A temporary git repository holding a data project built from `files`, committed once. */
export async function makeProject(files: Record<string, string | Buffer>, options: { commit?: boolean } = {}): Promise<string> {
  const root = tempDir();
  await initRepo(root);
  writeFiles(root, { '.gitignore': '.errata/\n', ...files });
  if (options.commit !== false) await commitAll(root, 'Add the project', AUTHOR);
  return root;
}

let clock = AUTHOR.timestamp;
/** Commit everything with the pinned author, each commit a day after the last. */
export async function commit(root: string, message: string): Promise<string> {
  clock += 86_400;
  return commitAll(root, message, { ...AUTHOR, timestamp: clock });
}

export function removeDir(dir: string): void {
  rmSync(dir, { recursive: true, force: true });
}
