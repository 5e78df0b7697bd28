import path from 'node:path';
import { ErrataError } from '../errors.js';
import { applyColumnTypes, decideColumnTypes, type ValueType } from './column-types.js';
import { assertKeyValid } from './keys.js';
import { formatOf, loadFile, type FileFormat } from './load-table.js';
import type { Session } from './session.js';

/**
 * Load a file outside any project (for `diff --files`, `profile --files`): read as text, decide each
 * column's type over every value, and check the key if one is given. With `keepText` the table stays
 * text and the decided types are only returned (a diff compares by them but shows the text delivered).
 * With `castKeyOnly` only the key columns take their types in the table; the rest stay text and their
 * decided types are returned for the caller to apply to what it reads (profile casts distinct values).
 */
export async function loadTypedFile(
  session: Session,
  file: string,
  target: string,
  options: { key?: readonly string[]; format?: FileFormat; delimiter?: string; keepText?: boolean; castKeyOnly?: boolean; declared?: ReadonlyMap<string, ValueType> } = {},
): Promise<Map<string, ValueType>> {
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
  const typings = await decideColumnTypes(session, target, key, options.declared ?? new Map(), { preserveText: !options.keepText, keyChecked: key.length > 0 });
  if (!options.keepText) await applyColumnTypes(session, target, options.castKeyOnly ? typings.filter((t) => key.includes(t.column)) : typings);
  const types = new Map<string, ValueType>(columns.map((c) => [c, 'string']));
  for (const t of typings) types.set(t.column, t.type);
  return types;
}
