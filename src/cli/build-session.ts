import { buildProject, type BuildProgress, type ProjectBuild } from '../build/build-project.js';
import type { ProjectTree } from '../git/tree.js';
import type { Output } from './output.js';
import { workDir } from './context.js';

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
