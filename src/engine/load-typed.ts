import path from 'node:path';
import { ErrataError } from '../errors.js';
import { applyColumnTypes, decideColumnTypes } from './column-types.js';
import { assertKeyValid } from './keys.js';
import { formatOf, loadFile, type FileFormat } from './load-table.js';
import type { Session } from './session.js';

/**
 * Load a file outside any project (for `diff --files`, `profile --files`): read as text, decide each
 * column's type over every value, and check the key if one is given.
 */
export async function loadTypedFile(
  session: Session,
  file: string,
  target: string,
  options: { key?: readonly string[]; format?: FileFormat; delimiter?: string } = {},
): Promise<string[]> {
  const format = formatOf(file, options.format);
  if (!format) {
    throw new ErrataError('INPUT_FORMAT', `cannot tell the format of ${path.basename(file)} from its extension`, {
      hint: 'Use .csv, .tsv, .parquet or .jsonl, or pass --format.',
      data: { file },
    });
  }
  const columns = await loadFile(session, { name: file, localPath: path.resolve(file), format, delimiter: options.delimiter }, target);
  const key = options.key ?? [];
  if (key.length) await assertKeyValid(session, target, key, columns, file);
  await applyColumnTypes(session, target, await decideColumnTypes(session, target, key, new Map()));
  return columns;
}
