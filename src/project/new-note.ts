import { stringify } from 'yaml';
import { parseNote, type ApprovalNote } from './notes.js';

export interface NoteFields {
  id: string;
  approver: string;
  role?: string;
  date: string;
  approves: string;
  evidence: string;
}

/** The text of notes/<id>.md, checked by the same parser every note goes through. */
export function composeNote(fields: NoteFields): { file: string; text: string; note: ApprovalNote } {
  const front: Record<string, string> = { id: fields.id, approver: fields.approver };
  if (fields.role) front.role = fields.role;
  front.date = fields.date;
  front.approves = fields.approves;
  const text = `---\n${stringify(front, { lineWidth: 0 })}---\n${fields.evidence.trim()}\n`;
  const file = `notes/${fields.id}.md`;
  return { file, text, note: parseNote(file, text) };
}
