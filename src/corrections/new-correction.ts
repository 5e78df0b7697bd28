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
  const numbers = (await tree.list(folder))
    .map((f) => CORRECTION_NAME.exec(f.slice(f.lastIndexOf('/') + 1))?.[1])
    .filter((n): n is string => n !== undefined)
    .map(Number);
  const next = (numbers.length ? Math.max(...numbers) : 0) + 1;
  return `${folder}/${String(next).padStart(4, '0')}-${slugOf(reason)}.yaml`;
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
