import type { Discrepancy, TableCheck } from '../check/types.js';
import { plain, showValue, type Paint } from './paint.js';

/** Exit status of a check: it fails when any discrepancy is an error; warnings alone pass. */
export function checkFailed(tables: readonly TableCheck[]): boolean {
  return tables.some((t) => t.discrepancies.some((d) => d.severity === 'error'));
}

/**
 * Exactly `{"discrepancies":[{"key","column","value","rule","severity","message"}]}`, keys in that
 * order, one discrepancy a line. With several tables, columns are named `table.column`.
 */
export function renderCheckJson(tables: readonly TableCheck[]): string {
  return [...checkJsonChunks(tables, Infinity)].join('');
}

/**
 * The same JSON in pieces of about `chunkSize` characters, so that millions of discrepancies can be
 * written out without building one string longer than JavaScript allows.
 */
export function* checkJsonChunks(tables: readonly TableCheck[], chunkSize = 1 << 20): Generator<string> {
  const several = tables.length > 1;
  let chunk = '{"discrepancies":[';
  let first = true;
  for (const t of tables) {
    for (const d of t.discrepancies) {
      chunk += (first ? '\n' : ',\n') + JSON.stringify({
        key: d.key,
        column: several && d.column !== null ? qualify(t.table, d.column) : d.column,
        value: d.value,
        rule: d.rule,
        severity: d.severity,
        message: d.message,
      });
      first = false;
      if (chunk.length >= chunkSize) {
        yield chunk;
        chunk = '';
      }
    }
  }
  yield `${chunk}${first ? '' : '\n'}]}\n`;
}

function qualify(table: string, columns: string): string {
  return columns
    .split(', ')
    .map((c) => `${table}.${c}`)
    .join(', ');
}

export interface CheckTextOptions {
  /** At most this many discrepancies shown per rule (all are counted); default 20. */
  limit?: number;
}

/**
 * Discrepancies grouped by rule, each group counted, in the order the rules were first met:
 *
 *   visits (clean, 120 rows): 3 errors, 1 warning
 *
 *     maximum: 2 errors
 *       pid=4   age  200  above the maximum 120
 */
export function renderCheckText(tables: readonly TableCheck[], paint: Paint = plain, options: CheckTextOptions = {}): string {
  const limit = options.limit ?? 20;
  const blocks = tables.map((t) => renderTable(t, paint, limit));
  if (tables.length > 1) {
    const all = tables.flatMap((t) => t.discrepancies);
    blocks.push(`${tables.length} tables checked: ${counts(all, paint)}`);
  }
  return blocks.join('\n\n') + '\n';
}

function renderTable(table: TableCheck, paint: Paint, limit: number): string {
  const header = `${paint.bold(table.table)} (${table.source}, ${table.rows} row${table.rows === 1 ? '' : 's'}): `;
  if (table.discrepancies.length === 0) return header + paint.green('no discrepancies');
  const lines = [header + counts(table.discrepancies, paint)];
  for (const [rule, group] of byRule(table.discrepancies)) {
    lines.push('');
    lines.push(`  ${paint.bold(rule)}: ${counts(group, paint)}`);
    const shown = group.slice(0, limit).map((d) => [where(table, d), d.column ?? '', d.value === null && d.key === null ? '' : showValue(d.value), d]);
    const widths = [0, 1, 2].map((i) => Math.min(40, Math.max(...shown.map((row) => (row[i] as string).length))));
    for (const [place, column, value, d] of shown as Array<[string, string, string, Discrepancy]>) {
      const cells = [place.padEnd(widths[0]), column.padEnd(widths[1]), ...(widths[2] ? [value.padEnd(widths[2])] : [])];
      const text = `    ${cells.join('  ')}  ${d.message}`.trimEnd();
      lines.push(d.severity === 'warning' ? paint.yellow(text) : text);
    }
    if (group.length > shown.length) lines.push(paint.dim(`    … and ${group.length - shown.length} more (--format json lists them all)`));
  }
  return lines.join('\n');
}

function where(table: TableCheck, d: Discrepancy): string {
  if (d.key === null) return '(column)';
  if (table.keyColumns.length === 0) return d.key;
  return `${table.keyColumns.join(',')}=${d.key}`;
}

function byRule(discrepancies: readonly Discrepancy[]): Map<string, Discrepancy[]> {
  const groups = new Map<string, Discrepancy[]>();
  for (const d of discrepancies) {
    const group = groups.get(d.rule);
    if (group) group.push(d);
    else groups.set(d.rule, [d]);
  }
  return groups;
}

function counts(discrepancies: readonly Discrepancy[], paint: Paint): string {
  const errors = discrepancies.filter((d) => d.severity === 'error').length;
  const warnings = discrepancies.length - errors;
  const parts: string[] = [];
  if (errors) parts.push(paint.red(`${errors} error${errors === 1 ? '' : 's'}`));
  if (warnings) parts.push(paint.yellow(`${warnings} warning${warnings === 1 ? '' : 's'}`));
  return parts.length ? parts.join(', ') : paint.green('no discrepancies');
}
