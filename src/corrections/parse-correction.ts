import { isMap, isScalar, isSeq, type Node } from 'yaml';
import { ErrataError } from '../errors.js';
import { keyText } from '../engine/keys.js';
import { scalarText } from '../project/codebook.js';
import { YamlFile, checkSchema, nodeAt, type Schema, type SchemaProblem } from '../project/yaml-file.js';
import type { CellEdit, Correction, RecodeElse, Step, StepKind } from './types.js';
import type { ValueType } from '../engine/column-types.js';

/** Correction files are named NNNN-slug.yaml: the number orders them, the slug says what they do. */
export const CORRECTION_NAME = /^(\d{4})-[a-z0-9][a-z0-9-]*\.ya?ml$/;

const expression: Schema = { type: 'scalar', description: 'a SQL expression' };
const columnName: Schema = { type: 'string', description: 'a column name' };
const columnList: Schema = { type: 'stringOrArray', items: columnName };
const TYPES = ['string', 'integer', 'number', 'boolean', 'date'] as const;

/** The schema of each step kind; `where` and `comment` sit beside the kind key. */
const STEP_SCHEMAS: Record<StepKind, Schema> = {
  set: { type: 'object', values: expression, minKeys: 1, description: 'column: expression' },
  edit: {
    type: 'array',
    minItems: 1,
    items: {
      type: 'object',
      required: ['key', 'column', 'from', 'to'],
      fields: {
        key: { type: 'any', description: 'the row key, or a list for a composite key' },
        column: columnName,
        from: { type: 'scalar' },
        to: { type: 'scalar' },
      },
    },
  },
  recode: {
    type: 'object',
    required: ['column', 'map'],
    fields: {
      column: columnName,
      map: { type: 'object', values: { type: 'scalar' }, minKeys: 1, description: 'old value: new value' },
      else: { type: 'any', description: 'keep, missing, or { value: X }' },
    },
  },
  missing: {
    type: 'object',
    fields: { column: columnName, columns: columnList, values: { type: 'array', items: { type: 'scalar' }, minItems: 1 } },
  },
  convert: {
    type: 'object',
    required: ['column', 'to'],
    fields: {
      column: columnName,
      to: { type: 'string', enum: TYPES },
      as: columnName,
      invalid: { type: 'string', enum: ['error', 'missing'] },
    },
  },
  rename: { type: 'object', values: columnName, minKeys: 1, description: 'old name: new name' },
  drop: columnList,
  delete: { type: 'object', required: ['where', 'reason'], fields: { where: expression, reason: { type: 'string' } } },
  derive: { type: 'object', values: expression, minKeys: 1, description: 'new column: expression' },
};

const STEP_KINDS = Object.keys(STEP_SCHEMAS) as StepKind[];

const topSchema: Schema = {
  type: 'object',
  required: ['reason', 'steps'],
  fields: {
    reason: { type: 'string' },
    approval: { type: 'string', description: 'the id of an approval note in notes/' },
    steps: { type: 'array', minItems: 1, items: { type: 'any' } },
  },
};

const HINT = 'Fix the correction file at the line shown. A correction has `reason`, `approval` and a list of `steps`; see README "Correction files".';

/** Parse and validate one correction file. `file` is its repository path: corrections/<table>/NNNN-slug.yaml. */
export function parseCorrection(file: string, text: string): Correction {
  const parts = file.split('/');
  const id = parts[parts.length - 1];
  const table = parts[parts.length - 2] ?? '';
  const name = CORRECTION_NAME.exec(id);
  if (!name) {
    throw new ErrataError('CORRECTION_NAME', `correction file name "${id}" is not NNNN-slug.yaml`, {
      hint: 'Name it with a four-digit number and a short slug in lower case, e.g. 0007-height-inches.yaml.',
      data: { file },
    });
  }
  const yaml = YamlFile.parse(file, text);
  const problems = checkSchema(yaml, yaml.root, topSchema);
  const stepsNode = nodeAt(yaml.root, ['steps']);
  if (problems.length === 0 && isSeq(stepsNode)) {
    stepsNode.items.forEach((item, index) => problems.push(...checkStep(yaml, item as Node, index)));
  }
  if (problems.length) throw schemaError(file, problems);

  const js = yaml.toJS() as { reason: string; approval?: string; steps: Array<Record<string, unknown>> };
  const steps = (stepsNode as unknown as { items: Node[] }).items.map((node, index) => buildStep(yaml, node, js.steps[index], index));
  return { file, id, number: Number(name[1]), table, reason: js.reason, approval: js.approval, steps };
}

function schemaError(file: string, problems: SchemaProblem[]): ErrataError {
  const listed = problems.slice(0, 10).map((p) => `  ${file}:${p.line}: ${p.message}`).join('\n');
  return new ErrataError('CORRECTION_INVALID', problems.length === 1 ? problems[0].message : `${problems.length} problems:\n${listed}`, {
    hint: HINT,
    data: { file, line: problems[0].line, problems },
  });
}

function checkStep(yaml: YamlFile, node: Node, index: number): SchemaProblem[] {
  const path = `steps[${index}]`;
  const line = yaml.lineOf(node);
  if (!isMap(node)) return [{ line, path, message: `${path} must be a mapping such as "set: {...}"` }];
  const keys = node.items.map((p) => (isScalar(p.key) ? String(p.key.value) : ''));
  const kinds = keys.filter((k): k is StepKind => (STEP_KINDS as string[]).includes(k));
  if (kinds.length !== 1) {
    return [{
      line,
      path,
      message: kinds.length === 0
        ? `${path} names no step kind; expected one of: ${STEP_KINDS.join(', ')}`
        : `${path} names ${kinds.length} step kinds (${kinds.join(', ')}); write one step per list item`,
    }];
  }
  const kind = kinds[0];
  const allowedBeside = kind === 'set' || kind === 'missing' ? ['where', 'comment'] : ['comment'];
  const problems: SchemaProblem[] = [];
  for (const pair of node.items) {
    const key = isScalar(pair.key) ? String(pair.key.value) : '';
    if (key === kind) problems.push(...checkSchema(yaml, pair.value as Node, STEP_SCHEMAS[kind], `${path}.${kind}`));
    else if (!allowedBeside.includes(key)) {
      problems.push({ line: yaml.lineOf(pair.key as Node), path, message: `unknown key "${key}" beside ${kind}; allowed: ${allowedBeside.join(', ')}` });
    } else problems.push(...checkSchema(yaml, pair.value as Node, key === 'where' ? expression : { type: 'string' }, `${path}.${key}`));
  }
  if (kind === 'missing' && problems.length === 0) {
    const body = nodeAt(node, [kind]);
    const has = (k: string) => nodeAt(body, [k]) !== null;
    if (!has('column') && !has('columns')) problems.push({ line, path, message: `${path}.missing needs "column" or "columns"` });
    if (!has('values') && !keys.includes('where')) problems.push({ line, path, message: `${path}.missing needs "values", or a "where" beside it` });
  }
  if (kind === 'recode' && problems.length === 0) {
    const otherwise = nodeAt(nodeAt(node, [kind]), ['else']);
    if (otherwise && !isElse(otherwise)) {
      problems.push({ line: yaml.lineOf(otherwise), path, message: `${path}.recode.else must be keep, missing, or { value: X }` });
    }
  }
  return problems;
}

function isElse(node: Node): boolean {
  if (isScalar(node)) return node.value === 'keep' || node.value === 'missing';
  return isMap(node) && node.items.length === 1 && isScalar(node.items[0].key) && node.items[0].key.value === 'value' && isScalar(node.items[0].value);
}

/** A YAML scalar's text exactly as written; null for YAML null (`~`, `null` or nothing). */
function valueText(node: Node | null): string | null {
  if (!node || !isScalar(node) || node.value === null) return null;
  return scalarText(node as { value: unknown; source?: string; type?: string });
}

/** A mapping's entries as written: names to expression text (a bare `3` stays the expression 3). */
function pairsOf(node: Node | null): Array<[string, string]> {
  if (!isMap(node)) return [];
  return node.items.map((pair) => [String((pair.key as { value: unknown }).value), valueText(pair.value as Node) ?? 'NULL']);
}

function whereText(stepNode: Node): string | undefined {
  return valueText(nodeAt(stepNode, ['where'])) ?? undefined;
}

function asList(value: unknown): string[] {
  return Array.isArray(value) ? (value as string[]) : [value as string];
}

function buildStep(yaml: YamlFile, node: Node, js: Record<string, unknown>, index: number): Step {
  const origin = { file: yaml.file, line: yaml.lineOf(node) };
  const kind = STEP_KINDS.find((k) => k in js)!;
  const body = js[kind] as Record<string, unknown>;
  const bodyNode = nodeAt(node, [kind]);
  switch (kind) {
    case 'set':
      return { kind, assignments: pairsOf(bodyNode).map(([column, e]) => ({ column, expression: e })), where: whereText(node), origin };
    case 'edit': {
      const cells = (bodyNode as unknown as { items: Node[] }).items.map((cellNode, i): CellEdit => {
        const keyNode = nodeAt(cellNode, ['key']);
        const key = isSeq(keyNode) ? keyNode.items.map((k) => valueText(k as Node) ?? '') : [valueText(keyNode) ?? ''];
        return {
          key: keyText(key),
          column: (js.edit as Array<{ column: string }>)[i].column,
          from: valueText(nodeAt(cellNode, ['from'])),
          to: valueText(nodeAt(cellNode, ['to'])),
          origin: { file: yaml.file, line: yaml.lineOf(cellNode) },
        };
      });
      return { kind, cells, origin };
    }
    case 'recode': {
      const mapNode = nodeAt(bodyNode, ['map']) as unknown as { items: Array<{ key: Node; value: Node }> };
      const map = mapNode.items.map((pair) => ({ from: valueText(pair.key) ?? '', to: valueText(pair.value) }));
      const elseNode = nodeAt(bodyNode, ['else']);
      let otherwise: RecodeElse = { keep: true };
      if (elseNode && isScalar(elseNode) && elseNode.value === 'missing') otherwise = { missing: true };
      else if (elseNode && isMap(elseNode)) otherwise = { value: valueText(nodeAt(elseNode, ['value'])) ?? '' };
      return { kind, column: body.column as string, map, otherwise, origin };
    }
    case 'missing': {
      const valuesNode = nodeAt(bodyNode, ['values']) as unknown as { items: Node[] } | null;
      return {
        kind,
        columns: body.columns !== undefined ? asList(body.columns) : [body.column as string],
        values: (valuesNode?.items ?? []).map((v) => valueText(v) ?? ''),
        where: whereText(node),
        origin,
      };
    }
    case 'convert':
      return {
        kind,
        column: body.column as string,
        to: body.to as ValueType,
        as: (body.as as string | undefined) ?? (body.column as string),
        invalid: (body.invalid as 'error' | 'missing' | undefined) ?? 'error',
        origin,
      };
    case 'rename':
      return { kind, renames: Object.entries(body).map(([from, to]) => ({ from, to: to as string })), origin };
    case 'drop':
      return { kind, columns: asList(js.drop), origin };
    case 'delete':
      return { kind, where: valueText(nodeAt(bodyNode, ['where'])) ?? '', reason: body.reason as string, origin };
    case 'derive':
      return { kind, columns: pairsOf(bodyNode).map(([name, e]) => ({ name, expression: e })), origin };
  }
  throw new Error(`step ${index}: unreachable`);
}
