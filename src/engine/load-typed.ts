import path from 'node:path';
import { ErrataError } from '../errors.js';
import { applyColumnTypes, decideColumnTypes, groupColumns, type GroupedColumns, type ValueType } from './column-types.js';
import { assertKeyValid } from './keys.js';
import { columnsOf, formatOf, loadFile, type FileFormat } from './load-table.js';
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
  return (await loadTypedFileGrouped(session, file, target, options)).types;
}

/**
 * loadTypedFile, with `group`: the text columns are grouped first (groupColumns) and the groups kept
 * and returned for the caller (the profile reads them; it drops them when done).
 */
export async function loadTypedFileGrouped(
  session: Session,
  file: string,
  target: string,
  options: { key?: readonly string[]; format?: FileFormat; delimiter?: string; keepText?: boolean; castKeyOnly?: boolean; declared?: ReadonlyMap<string, ValueType>; group?: boolean } = {},
): Promise<{ types: Map<string, ValueType>; grouped: GroupedColumns }> {
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
  // Text columns only (a Parquet delivery is typed already); a checked single-column key's rows are counted, not grouped.
  const texts = options.group ? (await columnsOf(session, target)).filter((c) => c.type === 'VARCHAR').map((c) => c.name) : [];
  const grouped = options.group ? await groupColumns(session, target, texts, key.length === 1 ? key[0] : null) : new Map<string, string>();
  const typings = await decideColumnTypes(session, target, key, options.declared ?? new Map(), { preserveText: !options.keepText, keyChecked: key.length > 0, grouped });
  if (!options.keepText) await applyColumnTypes(session, target, options.castKeyOnly ? typings.filter((t) => key.includes(t.column)) : typings);
  const types = new Map<string, ValueType>(columns.map((c) => [c, 'string']));
  for (const t of typings) types.set(t.column, t.type);
  return { types, grouped };
}
