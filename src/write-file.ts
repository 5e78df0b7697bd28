import { mkdirSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { ErrataError, type ErrorCode } from './errors.js';

/**
 * Write a file a command produces: under a temporary name beside its place, then renamed, so that no
 * one ever reads half of it and a failed write leaves what was there before.
 */
export function writeFileAtomically(
  file: string,
  content: string | Uint8Array,
  failure: { code?: ErrorCode; hint?: string } = {},
): void {
  const temp = `${file}.${process.pid}.tmp`;
  try {
    mkdirSync(path.dirname(file), { recursive: true });
    writeFileSync(temp, content);
    renameSync(temp, file);
  } catch (error) {
    rmSync(temp, { force: true });
    throw new ErrataError(failure.code ?? 'OUTPUT_WRITE', `cannot write ${file}: ${(error as Error).message}`, {
      hint: failure.hint ?? 'Check that the folder is writable.',
      data: { file },
      cause: error,
    });
  }
}
