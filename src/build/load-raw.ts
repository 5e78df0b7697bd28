import path from 'node:path';
import { ErrataError } from '../errors.js';
import { formatOf, loadFile, stackTables, type InputFile } from '../engine/load-table.js';
import { assertKeyValid } from '../engine/keys.js';
import type { Session } from '../engine/session.js';
import type { ProjectTree } from '../git/tree.js';
import type { TableConfig } from '../project/config.js';

export interface RawInput {
  path: string;
  blob: string;
}

/**
 * Load a table's raw delivery (the newest file of its folder, or all of them stacked) into `target`,
 * as text, and check its key. Raw files are only ever read.
 */
export async function loadRawTable(session: Session, tree: ProjectTree, table: TableConfig, target: string): Promise<{ inputs: RawInput[]; columns: string[] }> {
  const candidates = (await tree.list(table.raw)).filter((f) => formatOf(f, table.format) !== null);
  if (candidates.length === 0) {
    throw new ErrataError('INPUT_MISSING', `no data file for table "${table.name}" under ${table.raw}`, {
      hint: 'Put the delivery (CSV, TSV, Parquet or JSON lines) under that path, or fix `raw:` in errata.yaml.',
      data: { file: 'errata.yaml', line: table.line },
    });
  }
  const chosen = table.deliveries === 'latest' ? [candidates[candidates.length - 1]] : candidates;
  const inputs: RawInput[] = [];
  const parts: string[] = [];
  let columns: string[] = [];
  for (const [index, file] of chosen.entries()) {
    const input: InputFile = {
      name: file,
      localPath: await tree.localPath(file),
      format: formatOf(file, table.format)!,
      delimiter: table.delimiter,
    };
    const part = chosen.length === 1 ? target : `${target}__part${index}`;
    columns = await loadFile(session, input, part);
    for (const k of table.key) {
      if (!columns.includes(k)) {
        throw new ErrataError('KEY_COLUMN_MISSING', `the key column "${k}" is not in ${path.basename(file)}`, {
          hint: `Its columns are: ${columns.slice(0, 12).join(', ')}${columns.length > 12 ? ', ...' : ''}. Fix \`key:\` in errata.yaml, or ask for a delivery with that column.`,
          data: { file, column: k },
        });
      }
    }
    parts.push(part);
    inputs.push({ path: file, blob: await tree.blobId(file) });
  }
  if (parts.length > 1) await stackTables(session, parts, target);
  await assertKeyValid(session, target, table.key, columns, chosen.length === 1 ? chosen[0] : table.raw);
  return { inputs, columns };
}
