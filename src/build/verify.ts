import { readFileSync } from 'node:fs';
import type { ProjectTree } from '../git/tree.js';
import { sha256Of } from './hash.js';
import { MANIFEST_FILE } from './manifest.js';
import type { StagedOutputs } from './write-outputs.js';

export interface OutputMismatch {
  path: string;
  problem: 'missing' | 'differs';
  /** For text outputs: the first line where the committed file and the rebuild differ. */
  line?: number;
  committed?: string;
  rebuilt?: string;
}

/** Compare freshly staged outputs with the files the tree holds (working tree or a commit). */
export async function compareOutputs(staged: StagedOutputs, tree: ProjectTree): Promise<OutputMismatch[]> {
  const mismatches: OutputMismatch[] = [];
  for (const [relative, stagedFile] of [...staged.files].sort(([a], [b]) => (a < b ? -1 : 1))) {
    const committed = await tree.read(relative);
    if (!committed) {
      mismatches.push({ path: relative, problem: 'missing' });
      continue;
    }
    const rebuilt = readFileSync(stagedFile);
    if (sha256Of(committed) === sha256Of(rebuilt)) continue;
    const mismatch: OutputMismatch = { path: relative, problem: 'differs' };
    if (relative.endsWith('.csv') || relative === MANIFEST_FILE) Object.assign(mismatch, firstDifferentLine(committed, rebuilt));
    mismatches.push(mismatch);
  }
  return mismatches;
}

function firstDifferentLine(a: Buffer, b: Buffer): Pick<OutputMismatch, 'line' | 'committed' | 'rebuilt'> {
  const left = a.toString('utf8').split('\n');
  const right = b.toString('utf8').split('\n');
  for (let i = 0; i < Math.max(left.length, right.length); i += 1) {
    if (left[i] !== right[i]) return { line: i + 1, committed: left[i] ?? '(end of file)', rebuilt: right[i] ?? '(end of file)' };
  }
  return {};
}
