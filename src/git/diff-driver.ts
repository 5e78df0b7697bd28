import fs from 'node:fs';
import path from 'node:path';
import { git } from './isomorphic-git.js';

export const DRIVER_NAME = 'errata';
const BEGIN = '# errata: cell-level diffs for data files (`errata git-setup --undo` removes this block)';
const END = '# end errata';

/**
 * Make plain `git diff` and `git log -p` show cell-level diffs for the given paths: a diff driver in
 * the repository's config and a block of .gitattributes lines naming the paths. Returns the lines.
 */
export async function installDiffDriver(root: string, command: string, patterns: readonly string[]): Promise<string[]> {
  await git.setConfig({ fs, dir: root, path: `diff.${DRIVER_NAME}.command`, value: command });
  const lines = patterns.map((p) => `${p} diff=${DRIVER_NAME}`);
  writeAttributes(root, [...withoutBlock(readAttributes(root)), BEGIN, ...lines, END]);
  return lines;
}

/** Remove what installDiffDriver added, leaving the rest of .gitattributes and the config alone. */
export async function removeDiffDriver(root: string): Promise<boolean> {
  const before = readAttributes(root);
  const after = withoutBlock(before);
  const configured = (await git.getConfig({ fs, dir: root, path: `diff.${DRIVER_NAME}.command` })) !== undefined;
  if (configured) await git.setConfig({ fs, dir: root, path: `diff.${DRIVER_NAME}.command`, value: undefined });
  if (after.length !== before.length) writeAttributes(root, after);
  return configured || after.length !== before.length;
}

function readAttributes(root: string): string[] {
  const file = path.join(root, '.gitattributes');
  if (!fs.existsSync(file)) return [];
  const lines = fs.readFileSync(file, 'utf8').split('\n');
  if (lines[lines.length - 1] === '') lines.pop();
  return lines;
}

function withoutBlock(lines: string[]): string[] {
  const start = lines.indexOf(BEGIN);
  if (start < 0) return lines;
  const end = lines.indexOf(END, start);
  return [...lines.slice(0, start), ...lines.slice(end < 0 ? lines.length : end + 1)];
}

function writeAttributes(root: string, lines: string[]): void {
  const file = path.join(root, '.gitattributes');
  if (lines.length === 0) {
    if (fs.existsSync(file)) fs.unlinkSync(file);
    return;
  }
  const temp = `${file}.${process.pid}.tmp`;
  fs.writeFileSync(temp, lines.join('\n') + '\n');
  fs.renameSync(temp, file);
}
