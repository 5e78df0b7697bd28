import { mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { buildProject } from '../build/build-project.js';
import { publishOutputs, stageOutputs } from '../build/write-outputs.js';
import { commitAll, commitLog, type Author } from '../git/repo.js';
import { WorkingTree } from '../git/tree.js';
import { initProject } from '../project/init-project.js';
import { BUILD_COMMIT, demoHistory, epochSeconds } from './history.js';
import type { DemoPerson } from './project-files.js';

export interface DemoSummary {
  /** The project folder, absolute. */
  root: string;
  /** Rows of the built clean table. */
  rows: number;
  /** Columns (variables) of the built clean table. */
  columns: number;
  commits: number;
}

/**
 * Create the demo project in `dir` (new or empty): an invented cohort study whose raw delivery carries
 * the classic problems, with its codebook, approval notes and correction files committed one by one by
 * pinned authors at pinned times, then built and the clean outputs committed. The same on every run.
 *
 * @example
 * const demo = await createDemoProject('/tmp/kvc');
 * // demo.rows === 2400; `errata verify` passes in demo.root
 */
export async function createDemoProject(dir: string): Promise<DemoSummary> {
  const root = path.resolve(dir);
  await initProject(root);
  for (const commit of demoHistory()) {
    writeProjectFiles(root, commit.files);
    await commitAll(root, commit.message, authorAt(commit.author, commit.at));
  }
  const built = await buildDemo(root);
  await commitAll(root, BUILD_COMMIT.message, authorAt(BUILD_COMMIT.author, BUILD_COMMIT.at));
  return { root, ...built, commits: (await commitLog(root)).length };
}

function writeProjectFiles(root: string, files: Record<string, string>): void {
  for (const [relative, content] of Object.entries(files)) {
    const full = path.join(root, relative);
    mkdirSync(path.dirname(full), { recursive: true });
    writeFileSync(full, content);
  }
}

function authorAt(person: DemoPerson, at: string): Author {
  return { name: person.name, email: person.email, timestamp: epochSeconds(at), timezoneOffset: 0 };
}

/**
 * The real build, in process. The demo's corrections are written against its own delivery, so a conflict
 * or a column left as text here is a fault in the demo itself, not something for the user to fix.
 */
async function buildDemo(root: string): Promise<{ rows: number; columns: number }> {
  const workDir = path.join(root, '.errata', 'tmp');
  const build = await buildProject({ tree: new WorkingTree(root), workDir });
  try {
    const [table] = build.tables;
    if (build.conflicts.length || table.typeProblems.length) {
      throw new Error(`the demo project does not build cleanly: ${build.conflicts.length} conflicts, columns left as text: ${table.typeProblems.map((t) => t.column).join(', ') || 'none'}`);
    }
    publishOutputs(await stageOutputs(build, workDir, root), root);
    return { rows: table.rows, columns: table.columns.length };
  } finally {
    build.session.close();
  }
}
