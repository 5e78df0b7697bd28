import path from 'node:path';
import { ErrataError } from '../errors.js';
import { applyColumnTypes, decideColumnTypes, decideFromGroups, type TextColumns, type ValueType } from './column-types.js';
import { assertKeyValid } from './keys.js';
import { formatOf, loadFile, type FileFormat } from './load-table.js';
import type { Session } from './session.js';

interface LoadFileOptions {
  key?: readonly string[];
  format?: FileFormat;
  delimiter?: string;
}

/**
 * Load a file outside any project for a diff (`diff --files`): read as text, the key checked, and
 * each column's type decided over every value. The table stays text and the decided types are only
 * returned: a diff compares by them but shows the text delivered.
 */
export async function loadTypedFile(session: Session, file: string, target: string, options: LoadFileOptions = {}): Promise<Map<string, ValueType>> {
  // A keyed diff names rows by key, so the file may load in any order (see LoadOptions.anyOrder).
  const { columns, key } = await loadCheckedFile(session, file, target, options, (options.key ?? []).length > 0);
  const typings = await decideColumnTypes(session, target, key, new Map(), { preserveText: false, keyChecked: key.length > 0 });
  const types = new Map<string, ValueType>(columns.map((c) => [c, 'string']));
  for (const t of typings) types.set(t.column, t.type);
  return types;
}

/**
 * Load a file outside any project for a profile (`profile --files`): read as text, the key checked,
 * each text column grouped once and typed from its groups (see decideFromGroups). Only the key columns
 * take their types in the table; the profile casts the other columns' distinct values.
 */
export async function loadGroupedFile(
  session: Session,
  file: string,
  target: string,
  options: LoadFileOptions & { declared?: ReadonlyMap<string, ValueType> } = {},
): Promise<TextColumns> {
  const { key } = await loadCheckedFile(session, file, target, options);
  const { typings, text } = await decideFromGroups(session, target, key, options.declared ?? new Map());
  await applyColumnTypes(session, target, typings.filter((t) => key.includes(t.column)));
  return text;
}

async function loadCheckedFile(
  session: Session,
  file: string,
  target: string,
  options: LoadFileOptions,
  anyOrder = false,
): Promise<{ columns: string[]; key: readonly string[] }> {
  const format = formatOf(file, options.format);
  if (!format) {
    throw new ErrataError('INPUT_FORMAT', `cannot tell the format of ${path.basename(file)} from its extension`, {
      hint: 'Use .csv, .tsv, .parquet or .jsonl, or pass --format.',
      data: { file },
    });
  }
  const input = { name: file, localPath: path.resolve(file), format, delimiter: options.delimiter };
  const columns = await loadFile(session, input, target, { anyOrder });
  const key = options.key ?? [];
  const reloadInFileOrder = anyOrder ? async () => void (await loadFile(session, input, target)) : undefined;
  if (key.length) await assertKeyValid(session, target, key, columns, file, reloadInFileOrder);
  return { columns, key };
}
