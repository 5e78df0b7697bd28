import { ErrataError } from '../errors.js';
import type { ProjectTree } from '../git/tree.js';
import { YamlFile, assertSchema, type Schema } from './yaml-file.js';

/** A recorded decision: who approved what, when, and the evidence (the message or minutes it came from). */
export interface ApprovalNote {
  id: string;
  file: string;
  approver: string;
  role?: string;
  /** ISO date, YYYY-MM-DD. */
  date: string;
  approves: string;
  evidence: string;
}

export const NOTES_FOLDER = 'notes';

// `date` is checked after parsing: YAML reads an unquoted 2026-03-14 as a date, and either form is fine.
const noteSchema: Schema = {
  type: 'object',
  required: ['id', 'approver', 'date', 'approves'],
  fields: {
    id: { type: 'string', pattern: /^[A-Za-z0-9][A-Za-z0-9._-]*$/, description: 'letters, digits, . _ -' },
    approver: { type: 'string', description: 'the id of a person in people.yaml' },
    role: { type: 'string' },
    date: { type: 'any', description: 'YYYY-MM-DD' },
    approves: { type: 'string' },
  },
};

const HINT = 'A note starts with front matter between --- lines: id, approver, role, date (YYYY-MM-DD), approves; the evidence follows.';

/** Parse notes/<id>.md: YAML front matter, then the evidence as free text. */
export function parseNote(file: string, text: string): ApprovalNote {
  const match = /^---\r?\n([\s\S]*?)\r?\n---\r?\n?([\s\S]*)$/.exec(text);
  if (!match) {
    throw new ErrataError('NOTE_INVALID', 'the note has no front matter', { hint: HINT, data: { file, line: 1 } });
  }
  // Offset by one line so errors point at the note's own lines, below the opening ---.
  const yaml = YamlFile.parse(file, '\n' + match[1]);
  assertSchema(yaml, noteSchema, 'NOTE_INVALID', HINT);
  const js = yaml.toJS() as Record<string, unknown>;
  const date = js.date instanceof Date ? js.date.toISOString().slice(0, 10) : String(js.date);
  if (!/^\d{4}-\d{2}-\d{2}$/.test(date) || Number.isNaN(Date.parse(date))) {
    throw new ErrataError('NOTE_INVALID', `date "${date}" is not a calendar date written YYYY-MM-DD`, { hint: HINT, data: { file } });
  }
  const id = String(js.id);
  const expectedName = `${id}.md`;
  if (!file.endsWith(`/${expectedName}`) && file !== expectedName) {
    throw new ErrataError('NOTE_INVALID', `the note's id "${id}" does not match its file name`, {
      hint: `Name the file notes/${expectedName}, so a correction's approval: ${id} finds it.`,
      data: { file, line: 2 },
    });
  }
  return {
    id,
    file,
    approver: String(js.approver),
    role: js.role === undefined ? undefined : String(js.role),
    date,
    approves: String(js.approves),
    evidence: match[2].trim(),
  };
}

/** Every approval note in notes/, by id. */
export async function loadNotes(tree: ProjectTree): Promise<Map<string, ApprovalNote>> {
  const notes = new Map<string, ApprovalNote>();
  for (const file of await tree.list(NOTES_FOLDER)) {
    if (!file.endsWith('.md')) continue;
    const note = parseNote(file, ((await tree.read(file)) ?? Buffer.alloc(0)).toString('utf8'));
    notes.set(note.id, note);
  }
  return notes;
}
