import { existsSync, mkdirSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { ErrataError } from '../errors.js';
import type { PlannedFile } from './import-answers.js';

/**
 * Write new files into the project all together or not at all: none may exist yet (notes are never
 * overwritten), each is written beside its place under a temporary name, and only when every one is
 * written are they renamed into place.
 */
export function writeNewFiles(root: string, files: readonly PlannedFile[]): void {
  for (const { file } of files) {
    if (existsSync(path.join(root, file))) {
      throw new ErrataError('OUTPUT_WRITE', `${file} already exists`, {
        hint: 'Nothing was written. Another import or a person wrote it meanwhile: look at it, then import again.',
        data: { file },
      });
    }
  }
  const staged: Array<{ temp: string; full: string }> = [];
  try {
    for (const { file, text } of files) {
      const full = path.join(root, file);
      mkdirSync(path.dirname(full), { recursive: true });
      const temp = `${full}.${process.pid}.tmp`;
      writeFileSync(temp, text, { flag: 'wx' });
      staged.push({ temp, full });
    }
  } catch (error) {
    for (const { temp } of staged) rmSync(temp, { force: true });
    throw new ErrataError('OUTPUT_WRITE', `cannot write the answers: ${(error as Error).message}`, { hint: 'Nothing was written; check the folder is writable.', cause: error });
  }
  for (const { temp, full } of staged) renameSync(temp, full);
}
