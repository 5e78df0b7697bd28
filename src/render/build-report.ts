import type { TableBuild } from '../build/build-project.js';
import type { Conflict } from '../corrections/apply-corrections.js';
import { showValue } from './paint.js';

/** Columns whose values do not fit their type: they stay text, and here is what stops them. */
export function renderTypeProblems(tables: readonly TableBuild[]): string {
  const lines: string[] = [];
  for (const table of tables) {
    for (const t of table.typeProblems) {
      const examples = t.examples.map((e) => `${e.key}: ${showValue(e.value)}`).join(', ');
      const more = t.misfits > t.examples.length ? ', ...' : '';
      if (t.rewritten) {
        lines.push(`note: ${table.config.name}.${t.column} holds only numbers, but ${t.misfits} would print differently as a number (${examples}${more}), so it stays text. Declare it \`type: number\` in ${table.config.codebook} to make it numeric.`);
        continue;
      }
      const why = t.declared ? `declared ${t.declared} in ${table.config.codebook}` : `mostly ${t.wanted}`;
      lines.push(`warning: ${table.config.name}.${t.column} is ${why}, but ${t.misfits} value${t.misfits > 1 ? 's do' : ' does'} not fit, so it stays text (${examples}${more}). Write a correction for them.`);
    }
  }
  return lines.join('\n');
}

export function renderConflicts(conflicts: readonly Conflict[]): string {
  const lines = [`${conflicts.length} conflict${conflicts.length > 1 ? 's' : ''}: guarded edits whose cell no longer holds the value the decision was made on`];
  for (const c of conflicts) {
    const found = c.problem === 'row-missing' ? 'the row is not there' : `found ${showValue(c.found)}`;
    lines.push(`  ${c.file}:${c.line}: (${c.key}, ${c.column}) expected ${showValue(c.expected)}, ${found}`);
  }
  return lines.join('\n');
}
