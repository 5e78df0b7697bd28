import { existsSync, readFileSync } from 'node:fs';
import { ErrataError } from '../errors.js';
import type { ProjectTree } from '../git/tree.js';
import { YamlFile, assertSchema, nodeAt, type Schema } from './yaml-file.js';

/** Field types errata understands, named as Frictionless Table Schema names them. */
export type FieldType = 'string' | 'integer' | 'number' | 'boolean' | 'date';

export interface FieldConstraints {
  required?: boolean;
  unique?: boolean;
  minimum?: number | string;
  maximum?: number | string;
  minLength?: number;
  maxLength?: number;
  pattern?: string;
  enum?: string[];
}

export interface CodebookField {
  name: string;
  type?: FieldType;
  title?: string;
  description?: string;
  constraints: FieldConstraints;
  /** Per-field missing-value codes, overriding the codebook-wide list. */
  missingValues?: string[];
  /** Labels for codes: code text to label. */
  labels?: Record<string, string>;
  line: number;
}

export interface CodebookRule {
  name: string;
  /** A SQL boolean expression that must hold for every row. */
  assert: string;
  message: string;
  severity: 'error' | 'warning';
  line: number;
}

export interface Codebook {
  file: string;
  fields: CodebookField[];
  primaryKey: string[];
  missingValues: string[];
  rules: CodebookRule[];
}

const scalarList: Schema = { type: 'array', items: { type: 'scalar' } };

const fieldSchema: Schema = {
  type: 'object',
  required: ['name'],
  fields: {
    name: { type: 'string' },
    type: { type: 'string', enum: ['string', 'integer', 'number', 'boolean', 'date'] },
    format: { type: 'string' },
    title: { type: 'string' },
    description: { type: 'string' },
    unit: { type: 'string' },
    example: { type: 'scalar' },
    missingValues: scalarList,
    labels: { type: 'object', values: { type: 'scalar' } },
    constraints: {
      type: 'object',
      fields: {
        required: { type: 'boolean' },
        unique: { type: 'boolean' },
        minimum: { type: 'scalar' },
        maximum: { type: 'scalar' },
        minLength: { type: 'number' },
        maxLength: { type: 'number' },
        pattern: { type: 'string' },
        enum: scalarList,
      },
    },
  },
};

const ruleSchema: Schema = {
  type: 'object',
  required: ['name', 'assert'],
  fields: {
    name: { type: 'string' },
    assert: { type: 'string', description: 'a SQL boolean expression over the row' },
    message: { type: 'string' },
    severity: { type: 'string', enum: ['error', 'warning'] },
  },
};

const codebookSchema: Schema = {
  type: 'object',
  required: ['fields'],
  fields: {
    title: { type: 'string' },
    description: { type: 'string' },
    fields: { type: 'array', items: fieldSchema },
    primaryKey: { type: 'stringOrArray', items: { type: 'string' } },
    missingValues: scalarList,
    rules: { type: 'array', items: ruleSchema },
  },
};

const HINT = 'Fix the codebook at the line shown; field keys follow the Frictionless Table Schema (name, type, constraints, missingValues).';

/** The codebook of a table, or null when the project has none for it. */
export async function loadCodebook(tree: ProjectTree, file: string): Promise<Codebook | null> {
  const content = await tree.read(file);
  return content ? parseCodebook(file, content.toString('utf8')) : null;
}

export function parseCodebook(file: string, text: string): Codebook {
  const yaml = YamlFile.parse(file, text);
  assertSchema(yaml, codebookSchema, 'SCHEMA_INVALID', HINT);
  const js = yaml.toJS() as {
    fields: Array<Record<string, unknown>>;
    primaryKey?: string | string[];
    missingValues?: unknown[];
    rules?: Array<Record<string, string>>;
  };
  const names = new Set<string>();
  const fields = js.fields.map((f, index): CodebookField => {
    const line = yaml.lineOf(nodeAt(yaml.root, ['fields', index]));
    const name = f.name as string;
    if (names.has(name)) {
      throw new ErrataError('SCHEMA_INVALID', `field "${name}" is described twice`, { hint: HINT, data: { file, line } });
    }
    names.add(name);
    const constraints = { ...((f.constraints as FieldConstraints | undefined) ?? {}) };
    if (constraints.enum) constraints.enum = sourceTexts(yaml, ['fields', index, 'constraints', 'enum']);
    return {
      name,
      type: f.type as FieldType | undefined,
      title: f.title as string | undefined,
      description: f.description as string | undefined,
      constraints,
      missingValues: f.missingValues ? sourceTexts(yaml, ['fields', index, 'missingValues']) : undefined,
      labels: f.labels ? Object.fromEntries(Object.entries(f.labels as Record<string, unknown>).map(([k, v]) => [k, String(v)])) : undefined,
      line,
    };
  });
  const rules = (js.rules ?? []).map((r, index): CodebookRule => ({
    name: r.name,
    assert: r.assert,
    message: r.message ?? `rule ${r.name} does not hold`,
    severity: (r.severity as 'error' | 'warning' | undefined) ?? 'error',
    line: yaml.lineOf(nodeAt(yaml.root, ['rules', index])),
  }));
  const primaryKey = js.primaryKey === undefined ? [] : Array.isArray(js.primaryKey) ? js.primaryKey : [js.primaryKey];
  return {
    file,
    fields,
    primaryKey,
    missingValues: js.missingValues ? sourceTexts(yaml, ['missingValues']) : [''],
    rules,
  };
}

/** Values of a YAML list exactly as written (so `007` and `1.50` stay codes, not numbers). */
function sourceTexts(yaml: YamlFile, at: (string | number)[]): string[] {
  const node = nodeAt(yaml.root, at) as unknown as { items?: Array<{ value: unknown; source?: string; type?: string }> } | null;
  return (node?.items ?? []).map((item) => scalarText(item));
}

export function scalarText(node: { value: unknown; source?: string; type?: string }): string {
  if (node.type === 'PLAIN' && node.source !== undefined && node.value !== null) return node.source;
  return node.value === null || node.value === undefined ? '' : String(node.value);
}

export function fieldOf(codebook: Codebook | null, name: string): CodebookField | undefined {
  return codebook?.fields.find((f) => f.name === name);
}

/** The types a codebook declares, by column: what loading types those columns as. */
export function declaredTypes(codebook: Codebook | null): Map<string, FieldType> {
  return new Map((codebook?.fields ?? []).filter((f) => f.type).map((f) => [f.name, f.type as FieldType]));
}

/** A codebook file outside any project (`--codebook FILE`), read from disk. */
export function readCodebookFile(file: string): Codebook {
  if (!existsSync(file)) {
    throw new ErrataError('INPUT_MISSING', `no such codebook: ${file}`, { hint: 'Check the path given to --codebook.', data: { file } });
  }
  return parseCodebook(file, readFileSync(file, 'utf8'));
}
