import type { ColumnComparison, ColumnProfile, Flag, Histogram, KeyedValue, TableComparison, TableProfile } from '../profile/types.js';
import { plain, showValue, type Paint } from './paint.js';

/**
 * `profile --format json`: one object. Each column starts with the documented keys in the documented
 * order (name, type, n, missing, distinct, mean, sd, min, q1, median, q3, max, top), then histogram,
 * extremes, frequencies, flags and table. With several tables, column names carry a table prefix, as
 * in the combined diff summary.
 */
export function renderProfileJson(profiles: readonly TableProfile[]): string {
  const prefixed = profiles.length > 1;
  const columns = profiles.flatMap((p) => p.columns.map((c) => columnJson(c, p.table, prefixed)));
  const tables = profiles.map((p) => ({ name: p.table, source: p.source, rows: p.rows, key: p.key }));
  return JSON.stringify({ columns, tables }, null, 2) + '\n';
}

/** `profile --compare --format json`: each variable with its raw and clean profiles. */
export function renderComparisonJson(comparisons: readonly TableComparison[]): string {
  const prefixed = comparisons.length > 1;
  const columns = comparisons.flatMap((t) =>
    t.columns.map((c) => ({
      name: prefixed ? `${t.table}.${c.name}` : c.name,
      raw: c.raw ? columnJson(c.raw, t.table, false) : null,
      clean: c.clean ? columnJson(c.clean, t.table, false) : null,
      table: t.table,
      rawName: c.rawName,
      resolved: c.resolved,
      introduced: c.introduced,
    })),
  );
  const tables = comparisons.map((t) => ({ name: t.table, rows: t.rows, key: t.key }));
  return JSON.stringify({ columns, tables }, null, 2) + '\n';
}

function columnJson(c: ColumnProfile, table: string, prefixed: boolean) {
  return {
    name: prefixed ? `${table}.${c.name}` : c.name,
    type: c.type,
    n: c.n,
    missing: c.missing,
    distinct: c.distinct,
    mean: c.mean,
    sd: c.sd,
    min: c.min,
    q1: c.q1,
    median: c.median,
    q3: c.q3,
    max: c.max,
    top: c.top.map((t) => ({ value: t.value, count: t.count })),
    histogram: c.histogram,
    extremes: c.extremes,
    frequencies: c.frequencies,
    flags: c.flags,
    table,
  };
}

/** A profile for the terminal: per variable its counts, statistics, frequency table or top values, histogram, extremes and flags. */
export function renderProfileText(profiles: readonly TableProfile[], paint: Paint = plain): string {
  const blocks: string[] = [];
  for (const profile of profiles) {
    const key = profile.key.length ? `key ${profile.key.join(', ')}` : 'rows by data row number';
    const lines = [paint.bold(`${profile.table}`) + paint.dim(` · ${profile.source} · ${plural(profile.rows, 'row')} · ${profile.columns.length} variables · ${key}`)];
    for (const column of profile.columns) lines.push('', ...columnText(column, profile, paint));
    const flagged = profile.columns.filter((c) => c.flags.length);
    lines.push('', flagged.length ? paint.yellow(`${plural(flagged.reduce((s, c) => s + c.flags.length, 0), 'flag')} on ${plural(flagged.length, 'variable')}: ${flagged.map((c) => c.name).join(', ')}`) : paint.green('no flags'));
    blocks.push(lines.join('\n'));
  }
  return blocks.join('\n\n') + '\n';
}

function columnText(c: ColumnProfile, profile: TableProfile, paint: Paint): string[] {
  const lines = [`${paint.bold(c.name)}  ${paint.cyan(c.type)}`];
  const missingShare = c.n + c.missing ? ` (${formatPercent((100 * c.missing) / (c.n + c.missing))})` : '';
  lines.push(`  n ${c.n}   missing ${c.missing}${missingShare}   distinct ${c.distinct}`);
  if (c.mean !== null || c.min !== null) {
    const stats: Array<[string, number | null]> = [
      ['mean', c.mean],
      ['sd', c.sd],
      ['min', c.min],
      ['q1', c.q1],
      ['median', c.median],
      ['q3', c.q3],
      ['max', c.max],
    ];
    lines.push('  ' + stats.map(([label, value]) => `${label} ${formatNumber(value)}`).join('   '));
  }
  if (c.frequencies) lines.push(...frequencyText(c, paint));
  else if (c.distinct === c.n && c.n > 1) lines.push(`  ${paint.dim('every value distinct')}`);
  else if (c.top.length) lines.push(`  ${paint.dim('most frequent')} ${c.top.map((t) => `${showValue(t.value)} ×${t.count}`).join(', ')}`);
  // A coded variable's frequency table already shows its distribution and its ends.
  if (c.histogram && c.histogram.bins.length > 1 && !c.frequencies) lines.push(...histogramText(c.histogram, c.type === 'integer', paint));
  if (c.extremes && !c.frequencies) {
    const list = (values: KeyedValue[]) => values.map((e) => `${e.value} ${paint.dim(`(${rowName(e.key, profile)})`)}`).join(', ');
    lines.push(`  ${paint.dim('lowest ')} ${list(c.extremes.lowest)}`);
    lines.push(`  ${paint.dim('highest')} ${list(c.extremes.highest)}`);
  }
  for (const flag of c.flags) lines.push(`  ${paint.yellow('!')} ${paint.yellow(flagLabel(flag))}: ${flag.message}${flagKeys(flag, profile)}`);
  return lines;
}

function frequencyText(c: ColumnProfile, paint: Paint): string[] {
  const rows = c.frequencies ?? [];
  const labelled = rows.some((r) => r.label !== null);
  const cells = rows.map((r) => [
    r.value === null ? '(missing)' : showValue(r.value),
    labelled ? (r.label ?? '') : '',
    String(r.count),
    formatPercent(r.percent),
    formatPercent(r.cumulative),
  ]);
  const header = ['value', labelled ? 'label' : '', 'count', 'percent', 'cumulative'];
  const widths = header.map((h, i) => Math.max(h.length, ...cells.map((row) => row[i].length)));
  const line = (row: string[]) =>
    '    ' + row.map((cell, i) => (i < 2 ? cell.padEnd(widths[i]) : cell.padStart(widths[i]))).filter((_, i) => i !== 1 || labelled).join('  ');
  return [paint.dim(line(header)), ...cells.map(line)];
}

const BAR_WIDTH = 30;

function histogramText(h: Histogram, integer: boolean, paint: Paint): string[] {
  const most = Math.max(...h.bins.map((b) => b.count));
  const last = h.bins.length - 1;
  const labels = h.bins.map((b, i) =>
    integer
      ? b.to - b.from === 1
        ? formatNumber(b.from)
        : `${formatNumber(b.from)}–${formatNumber(b.to - 1)}`
      : `[${formatNumber(b.from)}, ${formatNumber(b.to)}${i === last ? ']' : ')'}`,
  );
  const width = Math.max(...labels.map((l) => l.length));
  const counts = Math.max(...h.bins.map((b) => String(b.count).length));
  const rule = h.rule === 'sturges' ? "Sturges' rule" : "Sturges' rule, whole-number bins";
  return [
    `  ${paint.dim(`histogram (${plural(h.bins.length, 'bin')}, ${rule})`)}`,
    ...h.bins.map((b, i) => `    ${labels[i].padStart(width)}  ${String(b.count).padStart(counts)} ${paint.cyan(bar(b.count, most))}`.trimEnd()),
  ];
}

/** A bar proportional to the count; any count above zero shows at least a sliver. */
function bar(count: number, most: number): string {
  if (count === 0 || most === 0) return '';
  const length = Math.round((count / most) * BAR_WIDTH);
  return length === 0 ? '▏' : '█'.repeat(length);
}

function flagLabel(flag: Flag): string {
  switch (flag.kind) {
    case 'number-as-text':
      return 'numbers stored as text';
    case 'sentinel':
      return `likely sentinel ${flag.value}`;
    case 'outside-codebook':
      return `outside the codebook (${flag.rule})`;
    case 'code-variants':
      return 'variant spellings';
  }
}

/** A row as the reader knows it: its key, or "row 12" in a file without one. */
function rowName(key: string, profile: TableProfile): string {
  return profile.key.length ? key : `row ${key}`;
}

function flagKeys(flag: Flag, profile: TableProfile): string {
  if (!('keys' in flag) || flag.keys.length === 0) return '';
  const count = flag.count;
  const shown = flag.keys.map((k) => rowName(k, profile)).join(', ');
  return ` [${shown}${count > flag.keys.length ? ', …' : ''}]`;
}

/**
 * Raw and clean side by side, one line per variable: n, missing, distinct, mean, min and max as
 * raw → clean where they differ, and the flags the corrections cleared (or brought).
 */
export function renderComparisonText(comparisons: readonly TableComparison[], paint: Paint = plain): string {
  const blocks: string[] = [];
  for (const t of comparisons) {
    const rows = t.rows.raw === t.rows.clean ? plural(t.rows.clean, 'row') : `${t.rows.raw} → ${t.rows.clean} rows`;
    const lines = [paint.bold(t.table) + paint.dim(` · raw → clean · ${rows}`)];
    const header = ['variable', 'n', 'missing', 'distinct', 'mean', 'min', 'max'];
    const cells = t.columns.map((c) => comparisonCells(c));
    const widths = header.map((h, i) => Math.max(h.length, ...cells.map((row) => row.values[i].text.length)));
    lines.push(paint.dim('  ' + header.map((h, i) => h.padEnd(widths[i])).join('  ') + '  flags'));
    for (const row of cells) {
      const values = row.values.map((v, i) => (v.changed ? paint.yellow(v.text.padEnd(widths[i])) : v.text.padEnd(widths[i])));
      lines.push(`  ${values.join('  ')}  ${row.notes(paint)}`.trimEnd());
    }
    blocks.push(lines.join('\n'));
  }
  return blocks.join('\n\n') + '\n';
}

interface ComparisonRow {
  values: Array<{ text: string; changed: boolean }>;
  notes: (paint: Paint) => string;
}

function comparisonCells(c: ColumnComparison): ComparisonRow {
  const side = (pick: (p: ColumnProfile) => number | null) => (c.raw ? pick(c.raw) : null);
  const after = (pick: (p: ColumnProfile) => number | null) => (c.clean ? pick(c.clean) : null);
  const pairText = (pick: (p: ColumnProfile) => number | null) => {
    const before = formatNumber(side(pick));
    const now = formatNumber(after(pick));
    return before === now ? { text: now, changed: false } : { text: `${before} → ${now}`, changed: true };
  };
  const name = c.rawName ? `${c.name} (from ${c.rawName})` : c.name;
  const values = [
    { text: name, changed: false },
    pairText((p) => p.n),
    pairText((p) => p.missing),
    pairText((p) => p.distinct),
    pairText((p) => p.mean),
    pairText((p) => p.min),
    pairText((p) => p.max),
  ];
  return {
    values,
    notes: (paint) => {
      const notes: string[] = [];
      if (!c.raw) notes.push(paint.cyan('only in clean'));
      if (!c.clean) notes.push(paint.cyan('only in raw'));
      if (c.resolved.length) notes.push(paint.green(`cleared: ${c.resolved.map(flagLabel).join('; ')}`));
      if (c.introduced.length) notes.push(paint.red(`new: ${c.introduced.map(flagLabel).join('; ')}`));
      return notes.join('  ');
    },
  };
}

/**
 * Numbers for reading: whole numbers as they are, others to six significant digits or one more than
 * their whole part needs (so 10000000.2 keeps its .2); missing statistics as "–".
 */
export function formatNumber(value: number | null): string {
  if (value === null || Number.isNaN(value)) return '–';
  if (Number.isInteger(value) && Math.abs(value) < 1e15) return String(value);
  const whole = Math.abs(value) >= 1 ? Math.floor(Math.log10(Math.abs(value))) + 1 : 0;
  return String(Number(value.toPrecision(Math.min(15, Math.max(6, whole + 1)))));
}

function formatPercent(value: number): string {
  return `${value.toFixed(1)}%`;
}

function plural(count: number, one: string): string {
  return `${count} ${count === 1 ? one : `${one}s`}`;
}
