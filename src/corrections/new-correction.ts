import { stringify } from 'yaml';
import type { ProjectTree } from '../git/tree.js';
import { CORRECTION_NAME, parseCorrection } from './parse-correction.js';
import type { Correction } from './types.js';

export interface NewSetCorrection {
  table: string;
  assignments: Array<{ column: string; expression: string }>;
  where?: string;
  reason: string;
  approval: string;
}

/** The next free file name in corrections/<table>/: one more than the highest number, slug from the reason. */
export async function nextCorrectionPath(tree: ProjectTree, folder: string, reason: string): Promise<string> {
  return correctionPath(folder, await nextCorrectionNumber(tree, folder), reason);
}

/** One more than the highest correction number in the folder (1 for an empty folder). */
export async function nextCorrectionNumber(tree: ProjectTree, folder: string): Promise<number> {
  const numbers = (await tree.list(folder))
    .map((f) => CORRECTION_NAME.exec(f.slice(f.lastIndexOf('/') + 1))?.[1])
    .filter((n): n is string => n !== undefined)
    .map(Number);
  return (numbers.length ? Math.max(...numbers) : 0) + 1;
}

/** corrections/<table>/0007-slug-of-the-reason.yaml */
export function correctionPath(folder: string, number: number, reason: string): string {
  return `${folder}/${String(number).padStart(4, '0')}-${slugOf(reason)}.yaml`;
}

/** A short lower-case slug: the reason's first few words. */
export function slugOf(text: string): string {
  const words = text.toLowerCase().normalize('NFKD').replace(/[^a-z0-9\s-]/g, ' ').split(/[\s-]+/).filter(Boolean);
  return words.slice(0, 5).join('-').slice(0, 48).replace(/-+$/, '') || 'correction';
}

/**
 * The text of a one-step set correction, checked by the same parser every correction goes through,
 * so what `errata fix` writes is exactly what a person could have written.
 */
export function composeSetCorrection(file: string, spec: NewSetCorrection): { text: string; correction: Correction } {
  const step: Record<string, unknown> = { set: Object.fromEntries(spec.assignments.map((a) => [a.column, a.expression])) };
  if (spec.where) step.where = spec.where;
  const text = stringify({ reason: spec.reason, approval: spec.approval, steps: [step] }, { lineWidth: 0, defaultStringType: 'QUOTE_DOUBLE', defaultKeyType: 'PLAIN' });
  return { text, correction: parseCorrection(file, text) };
}

export interface NewEditCorrection {
  reason: string;
  approval: string;
  /** `key` as lineage writes it: the value, or a JSON array of the values for a composite key. */
  cells: Array<{ key: string; keyColumns: number; column: string; from: string | null; to: string | null }>;
  /** A comment for the top of the file, e.g. where the decision came from. */
  comment?: string;
}

/** The text of a one-step correction of guarded cell edits, checked by the correction parser. */
export function composeEditCorrection(file: string, spec: NewEditCorrection): { text: string; correction: Correction } {
  const edits = spec.cells.map((c) => ({
    key: c.keyColumns > 1 ? (JSON.parse(c.key) as string[]) : c.key,
    column: c.column,
    from: c.from,
    to: c.to,
  }));
  const body = stringify({ reason: spec.reason, approval: spec.approval, steps: [{ edit: edits }] }, { lineWidth: 0, defaultStringType: 'QUOTE_DOUBLE', defaultKeyType: 'PLAIN' });
  const comment = spec.comment ? spec.comment.split('\n').map((l) => `# ${l}`.trimEnd()).join('\n') + '\n' : '';
  const text = comment + body;
  return { text, correction: parseCorrection(file, text) };
}
