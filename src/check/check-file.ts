import os from 'node:os';
import path from 'node:path';
import { ErrataError } from '../errors.js';
import { formatOf, loadFile, type FileFormat } from '../engine/load-table.js';
import { Session } from '../engine/session.js';
import { readCodebookFile } from '../project/codebook.js';
import { checkTable } from './check-table.js';
import type { TableCheck } from './types.js';

export interface CheckFileOptions {
  /** Columns naming each row; default: the codebook's primaryKey, else the row's position. */
  key?: string[];
  format?: FileFormat;
  delimiter?: string;
  memoryLimit?: string;
  spillDir?: string;
}

/**
 * Check one file against a codebook, outside any project (`errata check --files FILE --codebook CB`).
 * The file is read as delivered (text, for CSV), so the check sees what the data provider sent.
 *
 * @example
 *   const result = await checkFile('visits.csv', 'visits.codebook.yaml', { key: ['pid'] });
 */
export async function checkFile(file: string, codebookFile: string, options: CheckFileOptions = {}): Promise<TableCheck> {
  const codebook = readCodebookFile(codebookFile);
  const format = formatOf(file, options.format);
  if (!format) {
    throw new ErrataError('INPUT_FORMAT', `cannot tell the format of ${path.basename(file)} from its extension`, {
      hint: 'Use .csv, .tsv, .parquet or .jsonl.',
      data: { file },
    });
  }
  const spillDir = options.spillDir ?? path.join(os.tmpdir(), `errata-spill-${process.pid}`);
  const session = await Session.open({ memoryLimit: options.memoryLimit ?? '2GB', spillDir });
  try {
    const columns = await loadFile(session, { name: file, localPath: path.resolve(file), format, delimiter: options.delimiter }, 'checked');
    const given = options.key ?? [];
    for (const k of given) {
      if (!columns.includes(k)) {
        throw new ErrataError('KEY_COLUMN_MISSING', `the key column "${k}" is not in the file`, {
          hint: `The file's columns are: ${columns.slice(0, 12).join(', ')}${columns.length > 12 ? ', ...' : ''}. Fix --key.`,
          data: { file, line: 1, column: k },
        });
      }
    }
    // A primary key the file lacks is reported as a discrepancy; rows are then named by position.
    const primaryKey = codebook.primaryKey.every((k) => columns.includes(k)) ? codebook.primaryKey : [];
    const key = given.length ? given : primaryKey;
    await session.lockDown([spillDir]);
    const result = await checkTable(session, { table: 'checked', key, codebook });
    return { table: path.basename(file), source: file, keyColumns: [...key], ...result };
  } finally {
    session.close();
  }
}
