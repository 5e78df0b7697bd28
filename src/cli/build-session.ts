import path from 'node:path';
import { buildProject, type BuildProgress, type ProjectBuild } from '../build/build-project.js';
import type { CheckProgress } from '../check/check-project.js';
import type { ProjectTree } from '../git/tree.js';
import type { Output } from './output.js';
import { projectTree, workDir } from './context.js';

/** Build with progress shown on the terminal. */
export async function buildWithProgress(tree: ProjectTree, root: string, output: Output, table?: string, options: { keepRaw?: boolean } = {}): Promise<ProjectBuild> {
  const onProgress = (event: BuildProgress) => {
    if (event.phase === 'load') output.progress(`loading ${event.table}…`);
    if (event.phase === 'correct') output.progress(`${event.table}: correction ${event.index + 1}/${event.total} ${event.correction}`);
    if (event.phase === 'write') output.progress(`writing ${event.table}…`);
  };
  try {
    return await buildProject({ tree, table, workDir: workDir(root), onProgress, keepRaw: options.keepRaw });
  } finally {
    output.endProgress();
  }
}

/** What a check of the project (and the query export built on it) is given: where, what, and progress. */
export async function checkTarget(root: string, output: Output, options: { rev?: string; table?: string; raw?: boolean }) {
  return {
    tree: await projectTree(root, options.rev),
    table: options.table,
    raw: options.raw,
    workDir: workDir(root),
    cache: tableCache(root),
    onProgress: (event: CheckProgress) => output.progress(checkProgressText(event)),
  };
}

/** The progress line of a check (and of the build it starts from). */
function checkProgressText(event: CheckProgress): string {
  return event.phase === 'check' ? `checking ${event.table}…` : event.phase === 'load' ? `loading ${event.table}…` : `building ${event.table}…`;
}

/** The parse cache under .errata/cache/tables, which commands that read deliveries share. */
export function tableCache(root: string): { dir: string; write: true } {
  return { dir: path.join(root, '.errata', 'cache', 'tables'), write: true };
}

/** Finished revision diffs under .errata/cache/diffs, named by their inputs. */
export function diffCache(root: string): { dir: string } {
  return { dir: path.join(root, '.errata', 'cache', 'diffs') };
}

/** Finished reviews under .errata/cache/reviews, named by their two commits. */
export function reviewCache(root: string): { dir: string } {
  return { dir: path.join(root, '.errata', 'cache', 'reviews') };
}
