import { LineCounter, parseDocument, isMap, isSeq, isScalar, type Node, type Document } from 'yaml';
import { ErrataError } from '../errors.js';

/**
 * A parsed YAML file that remembers where each value came from, so every later error can say
 * "file:line: what is wrong, what was expected".
 */
export class YamlFile {
  private constructor(
    readonly file: string,
    readonly document: Document.Parsed,
    private readonly lines: LineCounter,
  ) {}

  static parse(file: string, text: string): YamlFile {
    const lines = new LineCounter();
    const document = parseDocument(text, { lineCounter: lines, prettyErrors: false, uniqueKeys: true });
    const problem = document.errors[0];
    if (problem) {
      const line = problem.linePos?.[0]?.line ?? lines.linePos(problem.pos[0]).line;
      throw new ErrataError('YAML_INVALID', `not valid YAML: ${problem.message.split('\n')[0]}`, {
        hint: 'Fix the YAML syntax at the line shown (indentation, quoting, a missing colon).',
        data: { file, line },
      });
    }
    return new YamlFile(file, document, lines);
  }

  /** 1-based line of a node (or of the document start). */
  lineOf(node: Node | null | undefined): number {
    const offset = node?.range?.[0];
    return offset === undefined ? 1 : this.lines.linePos(offset).line;
  }

  get root(): Node | null {
    return this.document.contents as Node | null;
  }

  toJS(): unknown {
    return this.document.toJS();
  }
}

/** The shape a YAML value must have. Small on purpose: it covers errata's own files and no more. */
export type Schema =
  | { type: 'string'; description?: string; pattern?: RegExp; enum?: readonly string[] }
  | { type: 'scalar'; description?: string }
  | { type: 'number'; description?: string }
  | { type: 'boolean'; description?: string }
  | { type: 'any'; description?: string }
  | { type: 'array'; items: Schema; minItems?: number; description?: string }
  | { type: 'stringOrArray'; items: Schema; description?: string }
  | {
      type: 'object';
      fields?: Record<string, Schema>;
      required?: readonly string[];
      /** Schema for keys not named in `fields` (a map); without it unknown keys are errors. */
      values?: Schema;
      minKeys?: number;
      description?: string;
    };

export interface SchemaProblem {
  line: number;
  path: string;
  message: string;
}

/** Check `node` against `schema`; every problem with its line and the dotted path of the value. */
export function checkSchema(file: YamlFile, node: Node | null | undefined, schema: Schema, path = ''): SchemaProblem[] {
  const problems: SchemaProblem[] = [];
  const at = (n: Node | null | undefined, message: string) =>
    problems.push({ line: file.lineOf(n ?? node), path: path || '(top level)', message });
  const label = path || 'the file';

  switch (schema.type) {
    case 'any':
      return problems;
    case 'scalar':
      if (!isScalar(node)) at(node, `${label} must be a single value, not a list or mapping`);
      return problems;
    case 'string': {
      if (!isScalar(node) || typeof node.value !== 'string') {
        at(node, `${label} must be text${schema.description ? ` (${schema.description})` : ''}`);
        return problems;
      }
      if (schema.enum && !schema.enum.includes(node.value))
        at(node, `${label} must be one of ${schema.enum.join(', ')}; found "${node.value}"`);
      if (schema.pattern && !schema.pattern.test(node.value))
        at(node, `${label} "${node.value}" is not in the expected form${schema.description ? ` (${schema.description})` : ''}`);
      return problems;
    }
    case 'number':
      if (!isScalar(node) || typeof node.value !== 'number') at(node, `${label} must be a number`);
      return problems;
    case 'boolean':
      if (!isScalar(node) || typeof node.value !== 'boolean') at(node, `${label} must be true or false`);
      return problems;
    case 'stringOrArray':
      if (isScalar(node) && typeof node.value === 'string') return problems;
      return checkSchema(file, node, { type: 'array', items: schema.items, minItems: 1 }, path);
    case 'array': {
      if (!isSeq(node)) {
        at(node, `${label} must be a list${schema.description ? ` (${schema.description})` : ''}`);
        return problems;
      }
      if (schema.minItems && node.items.length < schema.minItems)
        at(node, `${label} must have at least ${schema.minItems} item${schema.minItems > 1 ? 's' : ''}`);
      node.items.forEach((item, index) => {
        problems.push(...checkSchema(file, item as Node, schema.items, `${path}[${index}]`));
      });
      return problems;
    }
    case 'object': {
      if (!isMap(node)) {
        at(node, `${label} must be a mapping of names to values${schema.description ? ` (${schema.description})` : ''}`);
        return problems;
      }
      const seen = new Set<string>();
      for (const pair of node.items) {
        const keyNode = pair.key as Node;
        const key = isScalar(keyNode) ? String(keyNode.value) : '';
        seen.add(key);
        const child = path ? `${path}.${key}` : key;
        const fieldSchema = schema.fields?.[key] ?? schema.values;
        if (!fieldSchema) {
          const known = Object.keys(schema.fields ?? {});
          at(keyNode, `unknown key "${key}" in ${label}${known.length ? `; expected one of: ${known.join(', ')}` : ''}`);
          continue;
        }
        problems.push(...checkSchema(file, pair.value as Node, fieldSchema, child));
      }
      for (const required of schema.required ?? []) {
        if (!seen.has(required)) at(node, `${label} is missing the required key "${required}"`);
      }
      if (schema.minKeys && node.items.length < schema.minKeys) at(node, `${label} must not be empty`);
      return problems;
    }
  }
}

/** Throw the first problems as one error (all of them listed), or return quietly. */
export function assertSchema(file: YamlFile, schema: Schema, code: 'SCHEMA_INVALID' | 'CORRECTION_INVALID' | 'PROJECT_INVALID' | 'NOTE_INVALID', hint: string): void {
  const problems = checkSchema(file, file.root, schema);
  if (problems.length === 0) return;
  const first = problems[0];
  const listed = problems.slice(0, 10).map((p) => `  ${file.file}:${p.line}: ${p.message}`).join('\n');
  throw new ErrataError(code, problems.length === 1 ? first.message : `${problems.length} problems:\n${listed}`, {
    hint,
    data: { file: file.file, line: first.line, problems },
  });
}

/** Find the YAML node at a dotted path like "steps[2].set", for line numbers after validation. */
export function nodeAt(root: Node | null, path: (string | number)[]): Node | null {
  let node: unknown = root;
  for (const part of path) {
    if (typeof part === 'number' && isSeq(node)) node = node.items[part];
    else if (typeof part === 'string' && isMap(node)) node = node.items.find((p) => isScalar(p.key) && String(p.key.value) === part)?.value;
    else return null;
  }
  return (node as Node) ?? null;
}
