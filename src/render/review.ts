import type { Finding, ReviewResult } from '../review/types.js';
import { RULE_TEXT } from '../review/types.js';
import { escapeMarkdownCell, plain, type Paint } from './paint.js';

export type ReviewFormat = 'text' | 'markdown' | 'json';

const errorsOf = (r: ReviewResult) => r.findings.filter((f) => f.severity === 'error');
const warningsOf = (r: ReviewResult) => r.findings.filter((f) => f.severity === 'warning');

export function reviewPassed(result: ReviewResult): boolean {
  return errorsOf(result).length === 0;
}

export function summarizeReview(result: ReviewResult): string {
  const errors = errorsOf(result).length;
  const warnings = warningsOf(result).length;
  const range = `${result.base.slice(0, 7)}..${result.head.slice(0, 7)}`;
  const cells = `${result.cellsChanged} changed cell${result.cellsChanged === 1 ? '' : 's'} or rows (${result.cellsByCorrection} by corrections, ${result.cellsByDelivery} by new deliveries)`;
  const verdict = errors === 0 ? 'passed' : `failed with ${errors} finding${errors === 1 ? '' : 's'}`;
  return `Review of ${range} (${result.commits} commit${result.commits === 1 ? '' : 's'}, ${result.correctionsReviewed.length} correction${result.correctionsReviewed.length === 1 ? '' : 's'}): ${verdict}${warnings ? `, ${warnings} warning${warnings === 1 ? '' : 's'}` : ''}; ${cells}.`;
}

function where(f: Finding): string {
  const cell = f.key !== undefined ? `${f.table} ${f.key}${f.column ? ` ${f.column}` : ''}` : f.column ? `${f.table}.${f.column}` : '';
  return [cell, f.file, f.commit?.slice(0, 7)].filter(Boolean).join(' · ');
}

/** At most this many findings per rule in the text and Markdown forms; JSON lists them all. */
const PER_RULE = 50;

function grouped(findings: readonly Finding[]): Map<string, Finding[]> {
  const groups = new Map<string, Finding[]>();
  for (const f of findings) groups.set(f.rule, [...(groups.get(f.rule) ?? []), f]);
  return groups;
}

export function renderReview(result: ReviewResult, format: ReviewFormat, paint: Paint = plain): string {
  if (format === 'json') {
    return JSON.stringify({ passed: reviewPassed(result), ...result, findings: result.findings }, null, 2) + '\n';
  }
  if (format === 'markdown') return renderMarkdown(result);
  const lines = [reviewPassed(result) ? paint.green(summarizeReview(result)) : paint.red(summarizeReview(result))];
  for (const [rule, list] of grouped(result.findings)) {
    const first = list[0];
    lines.push('', `${first.severity === 'error' ? paint.red('✗') : paint.yellow('!')} ${paint.bold(rule)}: ${RULE_TEXT[first.rule]} (${list.length})`);
    for (const f of list.slice(0, PER_RULE)) lines.push(`    ${f.message}`);
    if (list.length > PER_RULE) lines.push(paint.dim(`    … and ${list.length - PER_RULE} more`));
  }
  return lines.join('\n') + '\n';
}

function renderMarkdown(result: ReviewResult): string {
  const lines = [`**errata review:** ${escapeMarkdownCell(summarizeReview(result))}`];
  if (result.findings.length === 0) return lines.join('\n') + '\n';
  lines.push('', '| | Rule | Where | Finding |', '|---|---|---|---|');
  for (const [, list] of grouped(result.findings)) {
    for (const f of list.slice(0, PER_RULE)) {
      lines.push(`| ${f.severity === 'error' ? '✗ error' : '! warning'} | \`${f.rule}\` | ${escapeMarkdownCell(where(f))} | ${escapeMarkdownCell(f.message)} |`);
    }
    if (list.length > PER_RULE) lines.push(`| | \`${list[0].rule}\` | | …and ${list.length - PER_RULE} more |`);
  }
  return lines.join('\n') + '\n';
}
