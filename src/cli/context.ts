import { existsSync } from 'node:fs';
import path from 'node:path';
import { ErrataError } from '../errors.js';
import { findRepoRoot } from '../git/repo.js';
import { RevisionTree, WorkingTree, type ProjectTree } from '../git/tree.js';
import { writableDir } from '../scratch.js';

/** Locate the data project (the git repository holding errata.yaml) from the current folder. */
export async function projectRoot(start = process.cwd()): Promise<string> {
  const root = await findRepoRoot(start);
  if (!root) {
    throw new ErrataError('PROJECT_NOT_FOUND', `${path.resolve(start)} is not inside a git repository`, {
      hint: 'Run errata inside a data project, or create one with `errata init DIR`.',
    });
  }
  return root;
}

/** The working tree, or the project as it stood at a revision. */
export async function projectTree(root: string, revision?: string): Promise<ProjectTree> {
  if (!revision) return new WorkingTree(root);
  return RevisionTree.at(root, revision, path.join(root, '.errata', 'cache', 'blobs'));
}

/** The .errata/tmp of the project the command runs in, or undefined outside any errata project. */
export async function projectWorkDir(start = process.cwd()): Promise<string | undefined> {
  const root = await dataProjectRoot(start);
  return root ? workDir(root) : undefined;
}

/**
 * The root of the errata project `start` is in: a git repository with errata.yaml at its top. Null
 * outside one (no project, a bare clone, some other repository).
 */
export async function dataProjectRoot(start = process.cwd()): Promise<string | null> {
  if (!projectFileAbove(start)) return null;
  const root = await findRepoRoot(start);
  return root && existsSync(path.join(root, 'errata.yaml')) ? root : null;
}

/**
 * Whether an errata.yaml sits in `dir` or a folder above it: without one there is no project to find,
 * and git (isomorphic-git, 0.06 s to load) need not be asked where the repository is.
 */
function projectFileAbove(dir: string): boolean {
  for (let at = path.resolve(dir); ; at = path.dirname(at)) {
    if (existsSync(path.join(at, 'errata.yaml'))) return true;
    if (path.dirname(at) === at) return false;
  }
}

/** Scratch space for the engine and for staging outputs: .errata/tmp, or a temporary folder in a read-only checkout. */
export function workDir(root: string): string {
  return writableDir(path.join(root, '.errata', 'tmp'));
}
