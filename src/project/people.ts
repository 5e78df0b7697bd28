import type { ProjectTree } from '../git/tree.js';
import { YamlFile, assertSchema, type Schema } from './yaml-file.js';

export const PEOPLE_FILE = 'people.yaml';

/** A person who may approve changes, and to which tables and columns. */
export interface Person {
  id: string;
  name: string;
  role?: string;
  email?: string;
  /** Table name → the columns this person may approve, or "all". */
  authority: Map<string, string[] | 'all'>;
}

const personSchema: Schema = {
  type: 'object',
  required: ['id', 'name'],
  fields: {
    id: { type: 'string', pattern: /^[A-Za-z0-9][A-Za-z0-9._-]*$/ },
    name: { type: 'string' },
    role: { type: 'string' },
    email: { type: 'string' },
    approves: {
      type: 'array',
      items: {
        type: 'object',
        required: ['table'],
        fields: { table: { type: 'string' }, columns: { type: 'stringOrArray', items: { type: 'string' } } },
      },
    },
  },
};

const peopleSchema: Schema = { type: 'object', fields: { people: { type: 'array', items: personSchema } } };

export function parsePeople(text: string): Person[] {
  const yaml = YamlFile.parse(PEOPLE_FILE, text);
  if (yaml.root === null) return [];
  assertSchema(yaml, peopleSchema, 'PROJECT_INVALID', 'people.yaml lists people: id, name, role, and approves: [{table, columns}] (columns: all, or a list).');
  const js = yaml.toJS() as { people?: Array<{ id: string; name: string; role?: string; email?: string; approves?: Array<{ table: string; columns?: string | string[] }> }> };
  return (js.people ?? []).map((p) => ({
    id: p.id,
    name: p.name,
    role: p.role,
    email: p.email,
    authority: new Map((p.approves ?? []).map((a) => [a.table, a.columns === undefined || a.columns === 'all' ? 'all' : Array.isArray(a.columns) ? a.columns : [a.columns]])),
  }));
}

export async function loadPeople(tree: ProjectTree): Promise<Person[]> {
  const content = await tree.read(PEOPLE_FILE);
  return content ? parsePeople(content.toString('utf8')) : [];
}
