import { closeSync, existsSync, openSync, readSync, statSync } from 'node:fs';
import path from 'node:path';
import { ErrataError } from '../errors.js';
import { fileLineOfUnit, scanDelimited } from './csv-records.js';
import { firstBadJsonLine, lineOfRecord } from './json-lines.js';
import { lineEndingProblem } from './line-endings.js';
import type { Session } from './session.js';
import { ident, identList, literal } from './sql.js';

export type FileFormat = 'csv' | 'tsv' | 'parquet' | 'jsonl';

export interface InputFile {
  /** Repository-relative path, used in every message. */
  name: string;
  /** Where DuckDB reads it from. */
  localPath: string;
  format: FileFormat;
  delimiter?: string;
}

const EXTENSIONS: Record<string, FileFormat> = {
  '.csv': 'csv',
  '.txt': 'csv',
  '.tsv': 'tsv',
  '.tab': 'tsv',
  '.parquet': 'parquet',
  '.jsonl': 'jsonl',
  '.ndjson': 'jsonl',
  '.json': 'jsonl',
};

/** The format a file is read as: the one configured, else by its extension; null if not a data file. */
export function formatOf(filename: string, configured?: FileFormat): FileFormat | null {
  if (configured) return configured;
  return EXTENSIONS[path.extname(filename).toLowerCase()] ?? null;
}

/**
 * Load one input file into table `target` exactly as delivered. CSV, TSV and JSON lines arrive as text
 * in every column, so nothing is converted (or lost) before type detection has looked at every row;
 * Parquet keeps the types its writer declared.
 */
export async function loadFile(session: Session, input: InputFile, target: string): Promise<string[]> {
  if (!existsSync(input.localPath) || !statSync(input.localPath).isFile()) {
    throw new ErrataError('INPUT_MISSING', `no such file: ${input.name}`, { hint: 'Check the path.', data: { file: input.name } });
  }
  // In CSV a NUL in a value is a NUL byte in the file, which the record count looks for on its way
  // (a table scan costs 0.3 s a million rows); JSON lines can spell one as an escape, so they are
  // always scanned as a table.
  switch (input.format) {
    case 'csv':
    case 'tsv': {
      const { header, holdsNulByte } = await loadDelimited(session, input, target);
      if (holdsNulByte) await assertNoNulBytes(session, target, header, input.name, (row) => lineOfDataRow(input, header.length, row));
      return header;
    }
    case 'parquet':
      return loadParquet(session, input, target);
    case 'jsonl': {
      const columns = await loadJsonLines(session, input, target);
      await assertNoNulBytes(session, target, columns, input.name, (row) => lineOfDataRow(input, columns.length, row));
      return columns;
    }
  }
}

/**
 * The file line of a loaded file's data row (1-based, in the order loaded), for messages: found by
 * reading the file again, since a quoted value may span lines and blank lines are skipped. Parquet
 * has no lines: it is counted as a file with a header line would be, as before.
 */
export async function lineOfDataRow(input: InputFile, width: number, row: number): Promise<number> {
  switch (input.format) {
    case 'csv':
    case 'tsv':
      return (await fileLineOfUnit(input.localPath, delimiterOf(input), width, row + 1, false)) ?? row + 1;
    case 'jsonl':
      return lineOfRecord(input.localPath, row);
    case 'parquet':
      return row + 1;
  }
}

/**
 * A NUL byte is no character any survey or lab system means to deliver: it marks a damaged file, and
 * would travel on into a clean CSV, where many programs stop reading at it.
 */
async function assertNoNulBytes(
  session: Session,
  table: string,
  columns: readonly string[],
  file: string,
  lineOf: (record: number) => Promise<number>,
): Promise<void> {
  if (columns.length === 0) return;
  // rowid of a table created from a file is the record's position in it.
  const rows = await session.all<Record<string, unknown> & { __errata_row: bigint }>(`
    SELECT rowid AS "__errata_row", * FROM ${ident(table)}
    WHERE ${columns.map((c) => `contains(${ident(c)}, chr(0))`).join(' OR ')}
    ORDER BY rowid
    LIMIT 1`);
  if (rows.length === 0) return;
  const row = Number(rows[0].__errata_row) + 1;
  const column = columns.find((c) => String(rows[0][c] ?? '').includes('\0'));
  throw new ErrataError('CSV_MALFORMED', `record ${row} holds a NUL byte in column "${column}"`, {
    hint: 'The file is damaged or not text; ask for it to be exported again and deliver it as a new raw file.',
    data: { file, line: await lineOf(row), column },
  });
}

const delimiterOf = (input: InputFile) => input.delimiter ?? (input.format === 'tsv' ? '\t' : ',');

async function loadDelimited(session: Session, input: InputFile, target: string): Promise<{ header: string[]; holdsNulByte: boolean }> {
  const delimiter = delimiterOf(input);
  const header = readHeader(input, delimiter);
  const columns = header.map((name) => `${literal(name)}: 'VARCHAR'`).join(', ');
  const read = (parallel: boolean) => `CREATE OR REPLACE TABLE ${ident(target)} AS
    SELECT * FROM read_csv(${literal(input.localPath)},
      header = true, auto_detect = false, columns = {${columns}},
      delim = ${literal(delimiter)}, quote = '"', escape = '"',
      strict_mode = true, allow_quoted_nulls = false, null_padding = false, max_line_size = ${MAX_LINE_BYTES}${parallel ? '' : ', parallel = false'})`;
  // The records are counted outside the engine while it reads (see csv-records.ts).
  const scanning = scanDelimited(input.localPath, delimiter, header.length);
  try {
    await session.runRaw(read(true));
  } catch (error) {
    await scanning.catch(() => undefined);
    throw await csvRefusal(input, delimiter, header.length, (error as Error).message);
  }
  const scan = await scanning;
  if ((await rowCount(session, target)) !== scan.records - 1) {
    // The parallel reader lost rows; the serial one was seen to report the row that made it.
    try {
      await session.runRaw(read(false));
    } catch (error) {
      throw await csvRefusal(input, delimiter, header.length, (error as Error).message);
    }
    const rows = await rowCount(session, target);
    if (rows !== scan.records - 1) {
      await session.run(`DROP TABLE IF EXISTS ${ident(target)}`);
      throw new ErrataError('CSV_MALFORMED', `the CSV reader returned ${rows} rows where the file holds ${scan.records - 1} records after its header`, {
        hint: 'Nothing was loaded, so no row can go missing. Look for unusual quoting or line breaks in the file, re-export it, and deliver it as a new raw file.',
        data: { file: input.name },
      });
    }
  }
  return { header, holdsNulByte: scan.holdsNulByte };
}

async function rowCount(session: Session, table: string): Promise<number> {
  const { n } = await session.one<{ n: bigint }>(`SELECT count(*) AS n FROM ${ident(table)}`);
  return Number(n);
}

/**
 * Free-text fields can be long; a line beyond this is refused with a clear message rather than read.
 * (DuckDB sizes its read buffers from it: 64 MiB made every read of a million rows 0.7 s slower.
 * Setting the buffer to 48 MiB read a million rows in 0.75 s rather than 0.9 s, but left a table whose
 * first updates took 0.3-0.7 s each, 0.8 s more in all.)
 */
const MAX_LINE_BYTES = 8 * 1024 * 1024;

/**
 * DuckDB's CSV messages carry a line, counted in records and blank lines: find the file's own line
 * (they differ after a line break inside quotes), name the file, and say what to do.
 */
async function csvRefusal(input: InputFile, delimiter: string, width: number, message: string): Promise<ErrataError> {
  const reported = Number(/CSV Error on Line: (\d+)/.exec(message)?.[1] ?? 0) || undefined;
  const line = reported && ((await fileLineOfUnit(input.localPath, delimiter, width, reported, true)) ?? reported);
  return csvError(input, message, line);
}

function csvError(input: InputFile, message: string, line: number | undefined): ErrataError {
  const columns = /Expected Number of Columns: (\d+) Found: (\d+)/.exec(message);
  const data = { file: input.name, line };
  if (/maximum line size/i.test(message)) {
    return new ErrataError('CSV_MALFORMED', `a line is longer than ${MAX_LINE_BYTES / 1024 / 1024} MiB`, {
      hint: 'Look for a quote that is never closed before that line, or deliver the long text in another form.',
      data,
    });
  }
  if (/invalid state/i.test(message)) {
    const problem = lineEndingProblem(input.localPath);
    if (problem) {
      return new ErrataError('CSV_MALFORMED', problem.what, {
        hint: 'Re-export the file with one kind of line ending throughout (LF or CRLF) and deliver it as a new raw file.',
        data: { file: input.name, line: problem.line },
      });
    }
  }
  if (columns) {
    return new ErrataError('CSV_MALFORMED', `row has ${columns[2]} fields where the header has ${columns[1]}`, {
      hint: 'Ragged row: look for a missing or extra delimiter, or a field whose quotes are not closed, at that line. Deliver a corrected file; raw files are never edited in place.',
      data,
    });
  }
  if (/unterminated quote/i.test(message)) {
    return new ErrataError('CSV_MALFORMED', 'a quoted field is never closed', {
      hint: 'Find the quote opened at that line and close it (a quote inside a field is written twice: "").',
      data,
    });
  }
  if (/unicode|utf-?8|encod/i.test(message)) {
    return new ErrataError('ENCODING', 'the file is not valid UTF-8', {
      hint: 'Re-export the file as UTF-8 (for example with iconv -f latin1 -t utf-8) and deliver it as a new raw file.',
      data,
    });
  }
  return new ErrataError('CSV_MALFORMED', message.split('\n').filter((l) => l && !l.startsWith('Original Line') && !l.startsWith('CSV Error'))[0] ?? message, {
    hint: 'Check the file at that line: delimiter, quoting and line endings.',
    data,
  });
}

const HEADER_PROBE_BYTES = 1 << 20;

/**
 * The header row, parsed here rather than by DuckDB so that empty and duplicate names are errors
 * (DuckDB would quietly invent names such as "column1" or "a_1").
 */
export function readHeader(input: InputFile, delimiter: string): string[] {
  const fd = openSync(input.localPath, 'r');
  const buffer = Buffer.alloc(HEADER_PROBE_BYTES);
  const length = readSync(fd, buffer, 0, HEADER_PROBE_BYTES, 0);
  closeSync(fd);
  let bytes = buffer.subarray(0, length);
  if (bytes[0] === 0xef && bytes[1] === 0xbb && bytes[2] === 0xbf) bytes = bytes.subarray(3);
  if (bytes.length === 0) {
    throw new ErrataError('CSV_HEADER', 'the file is empty: no header row', {
      hint: 'Deliver the file with a header row naming each column.',
      data: { file: input.name, line: 1 },
    });
  }
  if ((bytes[0] === 0xff && bytes[1] === 0xfe) || (bytes[0] === 0xfe && bytes[1] === 0xff)) {
    throw new ErrataError('ENCODING', 'the file is UTF-16, not UTF-8', {
      hint: 'Re-export the file as UTF-8 and deliver it as a new raw file.',
      data: { file: input.name, line: 1 },
    });
  }
  const names = parseFirstRecord(bytes.toString('latin1'), delimiter);
  let headerText: string;
  try {
    headerText = new TextDecoder('utf-8', { fatal: true }).decode(Buffer.from(names.raw, 'latin1'));
  } catch {
    throw new ErrataError('ENCODING', 'the header row is not valid UTF-8', {
      hint: 'Re-export the file as UTF-8 (for example with iconv -f latin1 -t utf-8) and deliver it as a new raw file.',
      data: { file: input.name, line: 1 },
    });
  }
  const header = parseFirstRecord(headerText, delimiter).fields;
  const seen = new Map<string, number>();
  header.forEach((name, index) => {
    if (name.trim() === '') {
      throw new ErrataError('CSV_HEADER', `column ${index + 1} of the header has no name`, {
        hint: 'Every column needs a name in the header row; deliver a file with the name filled in, or name it in the codebook.',
        data: { file: input.name, line: 1 },
      });
    }
    if (seen.has(name)) {
      throw new ErrataError('CSV_HEADER', `the header names "${name}" twice (columns ${seen.get(name)! + 1} and ${index + 1})`, {
        hint: 'Column names must be unique; deliver a file with distinct names.',
        data: { file: input.name, line: 1 },
      });
    }
    seen.set(name, index);
  });
  return header;
}

/** Split the first record of delimited text, honouring double-quoted fields that may span lines. */
function parseFirstRecord(text: string, delimiter: string): { fields: string[]; raw: string } {
  const fields: string[] = [];
  let field = '';
  let quoted = false;
  let i = 0;
  for (; i < text.length; i += 1) {
    const ch = text[i];
    if (quoted) {
      if (ch === '"' && text[i + 1] === '"') {
        field += '"';
        i += 1;
      } else if (ch === '"') quoted = false;
      else field += ch;
    } else if (ch === '"' && field === '') quoted = true;
    else if (ch === delimiter) {
      fields.push(field);
      field = '';
    } else if (ch === '\n' || ch === '\r') break;
    else field += ch;
  }
  fields.push(field);
  return { fields, raw: text.slice(0, i) };
}

async function loadParquet(session: Session, input: InputFile, target: string): Promise<string[]> {
  try {
    await session.runRaw(`CREATE OR REPLACE TABLE ${ident(target)} AS SELECT * FROM read_parquet(${literal(input.localPath)})`);
  } catch (error) {
    throw new ErrataError('INPUT_FORMAT', `not a readable Parquet file: ${(error as Error).message.split('\n')[0].replaceAll(input.localPath, input.name)}`, {
      hint: 'Check that the file is complete Parquet (not CSV renamed), or set `format:` for the table in errata.yaml.',
      data: { file: input.name },
    });
  }
  return columnNames(session, target);
}

/**
 * JSON lines: every key seen anywhere in the file becomes a column, in order of first appearance, and
 * every value arrives as text, so detection sees the whole file rather than a sample.
 */
async function loadJsonLines(session: Session, input: InputFile, target: string): Promise<string[]> {
  const staging = `${target}__json`;
  try {
    await session.runRaw(`CREATE OR REPLACE TEMP TABLE ${ident(staging)} AS
      SELECT row_number() OVER () AS line, json FROM read_ndjson_objects(${literal(input.localPath)})`);
  } catch (error) {
    const message = (error as Error).message;
    const reported = Number(/line (\d+)/i.exec(message)?.[1] ?? 0) || undefined;
    const found = await firstBadJsonLine(input.localPath, reported);
    throw new ErrataError('INPUT_FORMAT', found ? `not valid JSON lines: ${found.what}` : `not valid JSON lines: ${message.split('\n')[0].replaceAll(input.localPath, input.name)}`, {
      hint: 'Each line must hold one JSON object; fix or re-export the file.',
      data: { file: input.name, line: found?.line ?? reported },
    });
  }
  const notObjects = await session.all<{ line: bigint }>(
    `SELECT line FROM ${ident(staging)} WHERE json_type(json) <> 'OBJECT' ORDER BY line LIMIT 1`,
  );
  if (notObjects.length) {
    throw new ErrataError('INPUT_FORMAT', 'a line holds a JSON value that is not an object', {
      hint: 'Each line must be one object such as {"id": 1, "age": 34}.',
      data: { file: input.name, line: await lineOfRecord(input.localPath, Number(notObjects[0].line)) },
    });
  }
  const keys = await session.all<{ key: string }>(`
    SELECT key FROM (
      SELECT unnest(json_keys(json)) AS key, line, generate_subscripts(json_keys(json), 1) AS pos
      FROM ${ident(staging)})
    GROUP BY key ORDER BY min(line), min(pos)`);
  if (keys.length === 0) {
    throw new ErrataError('INPUT_FORMAT', 'the file holds no records', { hint: 'Deliver a file with at least one object per line.', data: { file: input.name } });
  }
  const selects = keys.map(({ key }) => `json_extract_string(json, ${literal(`$."${key.replaceAll('"', '\\"')}"`)}) AS ${ident(key)}`);
  await session.run(`CREATE OR REPLACE TABLE ${ident(target)} AS SELECT ${selects.join(', ')} FROM ${ident(staging)} ORDER BY line`);
  await session.run(`DROP TABLE ${ident(staging)}`);
  return keys.map((k) => k.key);
}

export async function columnNames(session: Session, table: string): Promise<string[]> {
  return (await columnsOf(session, table)).map((c) => c.name);
}

export interface ColumnInfo {
  name: string;
  /** DuckDB type name, e.g. VARCHAR, BIGINT, DOUBLE. */
  type: string;
}

/**
 * The columns of a table in order, none when there is no such table. Read with pragma_table_info,
 * which looks up the one table (0.7 ms), where duckdb_columns() lists every column of every table
 * (3–5 ms, paid on every correction step).
 */
export async function columnsOf(session: Session, table: string): Promise<ColumnInfo[]> {
  try {
    const rows = await session.allRaw<{ name: string; type: string }>(`SELECT name, type FROM pragma_table_info($1) ORDER BY cid`, [ident(table)]);
    return rows.map((r) => ({ name: r.name, type: r.type }));
  } catch (error) {
    if (/does not exist/i.test((error as Error).message)) return [];
    throw error;
  }
}

/** An empty table with the columns and types of `table`: the side of a diff where a table did not exist. */
export async function emptyLike(session: Session, table: string, name: string): Promise<string> {
  await session.run(`CREATE OR REPLACE TABLE ${ident(name)} AS SELECT * FROM ${ident(table)} LIMIT 0`);
  return name;
}

/** Stack several loaded deliveries into one table, matching columns by name. */
export async function stackTables(session: Session, parts: readonly string[], target: string): Promise<void> {
  const union = parts.map((p) => `SELECT * FROM ${ident(p)}`).join(' UNION ALL BY NAME ');
  await session.run(`CREATE OR REPLACE TABLE ${ident(target)} AS ${union}`);
  for (const p of parts) if (p !== target) await session.run(`DROP TABLE ${ident(p)}`);
}

export { identList };
