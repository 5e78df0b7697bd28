import os from 'node:os';
import path from 'node:path';
import { columnNames } from '../engine/load-table.js';
import { loadGroupedFile } from '../engine/load-typed.js';
import { Session } from '../engine/session.js';
import { ident } from '../engine/sql.js';
import { declaredTypes, type Codebook } from '../project/codebook.js';
import { profileTable } from './profile-table.js';
import type { TableProfile } from './types.js';

export interface FileProfileOptions {
  /** Key columns naming the rows in extremes and flags; without them rows go by data row number. */
  key?: string[];
  /** A codebook: its declared types, missing values, limits and codes apply as in a project. */
  codebook?: Codebook;
  memoryLimit?: string;
  spillDir?: string;
}

/**
 * Profile one file outside any project (`errata profile --files FILE`): loaded and typed as the build
 * would type it without a codebook, the key checked when one is given.
 *
 * @example
 *   const profile = await profileFile('exports/visits-2026-03.csv', { key: ['participant_id'] });
 */
export async function profileFile(file: string, options: FileProfileOptions = {}): Promise<TableProfile> {
  const session = await Session.open({
    memoryLimit: options.memoryLimit ?? '2GB',
    spillDir: options.spillDir ?? path.join(os.tmpdir(), `errata-spill-${process.pid}`),
  });
  try {
    const key = options.key ?? [];
    const codebook = options.codebook ?? null;
    const text = await loadGroupedFile(session, file, 'file', { key, declared: declaredTypes(codebook) });
    const name = path.basename(file);
    if (key.length) return await profileTable(session, 'file', { name, source: 'file', key, codebook, text });
    const rowColumn = unusedName('row', await columnNames(session, 'file'));
    await session.run(`CREATE TABLE "numbered" AS SELECT row_number() OVER () AS ${ident(rowColumn)}, * FROM "file"`);
    return await profileTable(session, 'numbered', { name, source: 'file', key: [], rowColumn, codebook, text });
  } finally {
    session.close();
  }
}

/** `base`, or `base_1`, `base_2`, … : the first name no column has. */
function unusedName(base: string, taken: readonly string[]): string {
  let name = base;
  for (let i = 1; taken.includes(name); i += 1) name = `${base}_${i}`;
  return name;
}
