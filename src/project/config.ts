import { ErrataError } from '../errors.js';
import type { ProjectTree } from '../git/tree.js';
import { repoRelativePath } from './paths.js';
import { YamlFile, assertSchema, nodeAt, type Schema } from './yaml-file.js';

export const CONFIG_FILE = 'errata.yaml';

export type InputFormat = 'csv' | 'tsv' | 'parquet' | 'jsonl';

/** How several files in a table's raw folder combine: the newest delivery alone, or all of them stacked. */
export type DeliveryMode = 'latest' | 'append';

export interface TableConfig {
  name: string;
  /** A file or a folder under raw/. */
  raw: string;
  deliveries: DeliveryMode;
  key: string[];
  format?: InputFormat;
  delimiter?: string;
  codebook: string;
  output: string;
  lineage: string;
  corrections: string;
  /** Line in errata.yaml where the table is declared, for errors. */
  line: number;
}

export interface ProjectConfig {
  tables: TableConfig[];
}

const TABLE_NAME = /^[A-Za-z][A-Za-z0-9_]*$/;

const tableSchema: Schema = {
  type: 'object',
  required: ['raw', 'key'],
  fields: {
    raw: { type: 'string', description: 'a file or folder under raw/' },
    deliveries: { type: 'string', enum: ['latest', 'append'] },
    key: { type: 'stringOrArray', items: { type: 'string' }, description: 'the key column, or a list of them' },
    format: { type: 'string', enum: ['csv', 'tsv', 'parquet', 'jsonl'] },
    delimiter: { type: 'string', pattern: /^.$|^\\t$/, description: 'one character' },
    codebook: { type: 'string' },
    output: { type: 'string' },
    description: { type: 'string' },
  },
};

const configSchema: Schema = {
  type: 'object',
  required: ['tables'],
  fields: {
    version: { type: 'number' },
    project: { type: 'string' },
    description: { type: 'string' },
    tables: { type: 'object', values: tableSchema },
  },
};

const HINT = 'Fix errata.yaml at the line shown; `errata init` writes a commented example.';

/** Read and validate errata.yaml from a tree (working tree or a revision). */
export async function loadConfig(tree: ProjectTree): Promise<ProjectConfig> {
  const content = await tree.read(CONFIG_FILE);
  if (!content) {
    throw new ErrataError('PROJECT_NOT_FOUND', `no ${CONFIG_FILE} in ${tree.label === 'working tree' ? tree.root : `commit ${tree.label}`}`, {
      hint: 'Run errata inside a data project, or create one with `errata init`.',
      data: { file: CONFIG_FILE },
    });
  }
  return parseConfig(content.toString('utf8'));
}

export function parseConfig(text: string): ProjectConfig {
  const file = YamlFile.parse(CONFIG_FILE, text);
  assertSchema(file, configSchema, 'PROJECT_INVALID', HINT);
  const js = file.toJS() as { tables: Record<string, Record<string, unknown>> | null };
  const tables: TableConfig[] = [];
  for (const [name, raw] of Object.entries(js.tables ?? {})) {
    const line = file.lineOf(nodeAt(file.root, ['tables', name]));
    if (!TABLE_NAME.test(name)) {
      throw new ErrataError('PROJECT_INVALID', `table name "${name}" must start with a letter and hold only letters, digits and _`, {
        hint: HINT,
        data: { file: CONFIG_FILE, line },
      });
    }
    const where = (field: string) => ({ file: CONFIG_FILE, line: file.lineOf(nodeAt(file.root, ['tables', name, field])), field });
    const key = (Array.isArray(raw.key) ? raw.key : [raw.key]) as string[];
    const delimiter = raw.delimiter === '\\t' ? '\t' : (raw.delimiter as string | undefined);
    tables.push({
      name,
      raw: repoRelativePath(raw.raw as string, where('raw')),
      deliveries: (raw.deliveries as DeliveryMode | undefined) ?? 'latest',
      key,
      format: raw.format as InputFormat | undefined,
      delimiter,
      codebook: repoRelativePath((raw.codebook as string | undefined) ?? `codebook/${name}.yaml`, where('codebook')),
      output: repoRelativePath((raw.output as string | undefined) ?? `clean/${name}.csv`, where('output')),
      lineage: `clean/${name}.lineage.parquet`,
      corrections: `corrections/${name}`,
      line,
    });
  }
  for (const table of tables) {
    table.lineage = table.output.replace(/\.[^./]+$/, '') + '.lineage.parquet';
  }
  return { tables };
}

export function findTable(config: ProjectConfig, name: string): TableConfig {
  const table = config.tables.find((t) => t.name === name);
  if (!table) {
    throw new ErrataError('TABLE_UNKNOWN', `no table "${name}" in ${CONFIG_FILE}`, {
      hint: `Known tables: ${config.tables.map((t) => t.name).join(', ') || '(none)'}.`,
      data: { file: CONFIG_FILE },
    });
  }
  return table;
}

/** The tables a command works on: the one named, or all of them. */
export function selectTables(config: ProjectConfig, name?: string): TableConfig[] {
  return name ? [findTable(config, name)] : config.tables;
}
