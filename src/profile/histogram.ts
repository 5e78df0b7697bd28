import type { Session } from '../engine/session.js';
import { ident } from '../engine/sql.js';
import type { Histogram } from './types.js';

/** Sturges' rule: ⌈log₂ n⌉ + 1 bins for n values (one bin for a single value). */
export function sturgesBinCount(n: number): number {
  return n <= 1 ? 1 : Math.ceil(Math.log2(n)) + 1;
}

export interface BinLayout {
  rule: Histogram['rule'];
  /** Bin i is edges[i] <= v < edges[i + 1]; for a number column the last bin also holds edges[k]. */
  edges: number[];
  /** Start and width the bin index is computed from (edges[i] = start + i × width for i < k). */
  start: number;
  width: number;
}

/**
 * The equal-width bins of a column from its minimum, maximum and count of values.
 *
 * - number: Sturges' k bins of width (max − min) / k; the last edge is the maximum itself, and the last
 *   bin is closed so it holds the maximum. All values equal: one bin [min, max].
 * - integer: whole-number widths, so no bin holds more possible values than another:
 *   w = ⌈(max − min + 1) / k⌉ and ⌈(max − min + 1) / w⌉ bins, each [min + i·w, min + (i + 1)·w).
 *   Ages 18 to 90 in 100 rows: k = 8, w = ⌈73 / 8⌉ = 10, bins [18, 28), [28, 38), …, [88, 98).
 */
export function binLayout(min: number, max: number, n: number, integer: boolean): BinLayout {
  const k = sturgesBinCount(n);
  if (integer) {
    const span = max - min + 1;
    const width = Math.max(1, Math.ceil(span / k));
    const count = Math.ceil(span / width);
    const edges = Array.from({ length: count + 1 }, (_, i) => min + i * width);
    return { rule: 'sturges-integer', edges, start: min, width };
  }
  if (max === min) return { rule: 'sturges', edges: [min, max], start: min, width: 0 };
  const width = (max - min) / k;
  const edges = Array.from({ length: k + 1 }, (_, i) => (i === k ? max : min + i * width));
  return { rule: 'sturges', edges, start: min, width };
}

/**
 * Count a numeric column's values into the bins of `binLayout`. The index is first estimated as
 * ⌊(v − start) / width⌋ and then moved by one where floating-point division put a value on the wrong
 * side of an edge, so membership follows the edges exactly as reported.
 */
export async function histogram(session: Session, table: string, column: string, layout: BinLayout, weight?: string): Promise<Histogram> {
  const count = layout.edges.length - 1;
  const v = `CAST(${ident(column)} AS DOUBLE)`;
  // With a weight, `table` holds distinct values and the weight says how many rows hold each.
  const rowsIn = weight ? `sum(${ident(weight)})` : 'count(*)';
  const w = weight ? ident(weight) : '1';
  let rows: Array<{ bin: number; count: bigint }>;
  if (layout.width === 0) {
    rows = await session.all(`SELECT 0 AS bin, ${rowsIn} AS count FROM ${ident(table)} WHERE ${ident(column)} IS NOT NULL`);
  } else {
    rows = await session.all(
      `SELECT bin, sum(w) AS count
       FROM (
         SELECT CASE
             WHEN v < $1 + guess * $2 THEN guess - 1
             WHEN guess < $3 - 1 AND v >= $1 + (guess + 1) * $2 THEN guess + 1
             ELSE guess
           END AS bin, w
         FROM (
           SELECT v, w, least($3 - 1, greatest(0, floor((v - $1) / $2))) AS guess
           FROM (SELECT ${v} AS v, ${w} AS w FROM ${ident(table)} WHERE ${ident(column)} IS NOT NULL)))
       GROUP BY bin`,
      [layout.start, layout.width, count],
    );
  }
  const counts = new Array<number>(count).fill(0);
  for (const row of rows) counts[Number(row.bin)] += Number(row.count);
  return {
    rule: layout.rule,
    bins: counts.map((c, i) => ({ from: layout.edges[i], to: layout.edges[i + 1], count: c })),
  };
}
