import path from 'node:path';
import { ErrataError } from '../errors.js';
import { applyColumnTypes, countTypeFits, decideFromGroups, type TextColumns, type TypeFits, type ValueType } from './column-types.js';
import { assertKeyValid } from './keys.js';
import { columnsOf, formatOf, loadFile, type FileFormat } from './load-table.js';
import { ident } from './sql.js';
import type { Session } from './session.js';

interface LoadFileOptions {
  key?: readonly string[];
  format?: FileFormat;
  delimiter?: string;
}

/**
 * Load a file outside any project for a diff (`diff --files`): read as text and the key checked. The
 * table stays text: a diff compares by types decided over each whole column but shows the text
 * delivered. With `countTypes`, the type fits of each text column that is not a key are counted and
 * returned (key columns are matched as text and never compared).
 */
export async function loadComparedFile(
  session: Session,
  file: string,
  target: string,
  options: LoadFileOptions & { countTypes: boolean },
): Promise<Map<string, TypeFits>> {
  const { key } = await loadCheckedFile(session, file, target, options);
  if (!options.countTypes) return new Map();
  const compared = (await columnsOf(session, target)).filter((c) => c.type === 'VARCHAR' && !key.includes(c.name)).map((c) => c.name);
  const fits = await countTypeFits(
    session,
    compared.map((c) => `SELECT ${ident(c)} AS v, count(*) AS k FROM ${ident(target)} GROUP BY ALL`),
  );
  return new Map(compared.map((c, i) => [c, fits[i]]));
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

async function loadCheckedFile(session: Session, file: string, target: string, options: LoadFileOptions): Promise<{ columns: string[]; key: readonly string[] }> {
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
  return { columns, key };
}
