import path from 'node:path';
import { ErrataError } from '../errors.js';
import { applyColumnTypes, decideFromGroups, type TextColumns, type ValueType } from './column-types.js';
import { assertKeyValid } from './keys.js';
import { formatOf, lineOfDataRow, loadFile, type FileFormat } from './load-table.js';
import type { Session } from './session.js';

interface LoadFileOptions {
  key?: readonly string[];
  format?: FileFormat;
  delimiter?: string;
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

/**
 * Load a file outside any project as text, its key checked when one is given: for a diff
 * (`diff --files`), which compares by types decided over each whole column but shows the text
 * delivered, and for loadGroupedFile (the profile).
 */
export async function loadCheckedFile(session: Session, file: string, target: string, options: LoadFileOptions): Promise<{ columns: string[]; key: readonly string[] }> {
  const format = formatOf(file, options.format);
  if (!format) {
    throw new ErrataError('INPUT_FORMAT', `cannot tell the format of ${path.basename(file)} from its extension`, {
      hint: 'Use .csv, .tsv, .parquet or .jsonl, or pass --format.',
      data: { file },
    });
  }
  const input = { name: file, localPath: path.resolve(file), format, delimiter: options.delimiter };
  const columns = await loadFile(session, input, target);
  const key = options.key ?? [];
  if (key.length) await assertKeyValid(session, target, key, columns, file, (row) => lineOfDataRow(input, columns.length, row));
  return { columns, key };
}
