import path from 'node:path';
import { diffFiles } from '../diff/file-diff.js';
import { formatOf } from '../engine/load-table.js';
import { WorkingTree } from '../git/tree.js';
import { loadConfig } from '../project/config.js';
import { renderDiffText, renderMultisetText } from '../render/diff-text.js';
import { findRepoRoot } from '../git/repo.js';
import type { Output } from './output.js';

/**
 * git runs `<command> path old-file old-hex old-mode new-file new-hex new-mode`. The key comes from
 * errata.yaml when the path belongs to a table; otherwise rows are compared without a key.
 */
export async function runDiffDriver(args: string[], output: Output): Promise<void> {
  const [file, oldFile, , , newFile] = args;
  output.out(`diff --errata a/${file} b/${file}`);
  if (!oldFile || !newFile || oldFile === '/dev/null' || newFile === '/dev/null') {
    output.out(oldFile === '/dev/null' ? `new file ${file}` : `deleted file ${file}`);
    return;
  }
  const root = (await findRepoRoot(process.cwd())) ?? process.cwd();
  const key = await keyFor(root, file);
  const format = formatOf(file) ?? 'csv';
  const withExtension = async (f: string) => (formatOf(f) ? f : await copyWithExtension(f, format));
  const result = await diffFiles(await withExtension(oldFile), await withExtension(newFile), { key, cellLimit: 500 });
  if ('onlyOld' in result) output.out(renderMultisetText({ ...result, table: file }, output.color));
  else output.out(renderDiffText({ ...result, table: file }, output.color));
}

async function keyFor(root: string, file: string): Promise<string[]> {
  try {
    const config = await loadConfig(new WorkingTree(root));
    const table = config.tables.find((t) => t.output === file || file === t.raw || file.startsWith(`${t.raw}/`));
    return table ? table.key : [];
  } catch {
    return [];
  }
}

/** git's temporary files may lack the extension the format is told by. */
async function copyWithExtension(file: string, format: string): Promise<string> {
  const { copyFileSync, mkdtempSync } = await import('node:fs');
  const { tmpdir } = await import('node:os');
  const target = path.join(mkdtempSync(path.join(tmpdir(), 'errata-driver-')), `side.${format === 'jsonl' ? 'jsonl' : format}`);
  copyFileSync(file, target);
  return target;
}
