import { fitsTypeSql } from '../engine/column-types.js';
import { ident } from '../engine/sql.js';
import { quantileRanksSql, rankedCounts, type7 } from './counted-quartiles.js';
import { exampleKeys, placeholders, plural, valuesWhere, type ColumnContext } from './column-context.js';
import type { Flag } from './types.js';

/**
 * Codes forms and export tools commonly use for "not known", "not applicable" or "refused": runs of 9s
 * and 8s, 98-style "refused" codes, each either sign, and −1. Such a value is only a candidate; it is
 * flagged when it also stands apart from the column's other values (see `sentinelFlags`).
 */
export const SENTINEL_CANDIDATES: readonly number[] = [
  ...[9, 99, 999, 9999, 99999, 999999, 9999999, 8, 88, 888, 8888, 98, 998, 9998].flatMap((c) => [c, -c]),
  -1,
].sort((a, b) => a - b);

/** At most this many distinct whole numbers, close together, make a code set (1 = yes, 2 = no, 9 = unknown). */
export const CODE_SET_MAX = 12;
/** Tukey's "far out" fence: this many interquartile ranges beyond the quartiles. */
export const FAR_OUT_IQRS = 3;
/** The other values needed before their quartiles say anything about what is far out. */
const FAR_OUT_MIN_REST = 5;

interface RestStats {
  n: number;
  lo: number;
  hi: number;
  /** Quartiles 1 and 3 (type 7). */
  q1: number;
  q3: number;
  kinds: number;
  whole: boolean;
}

/**
 * Likely sentinel codes in a column. Each flag names the value, how many rows hold it, its rule and a
 * few keys. The rules, first that applies:
 *
 * - declared-missing: the codebook lists the value under missingValues, yet rows still hold it (the
 *   build does not turn it into a missing value by itself; a `missing` correction does).
 * - negative: the candidate is negative and every other value is zero or more (−9 among ages).
 * - code-gap: the other values are a code set (at most 12 distinct whole numbers, spanning at most twice
 *   as many whole numbers as there are codes) and the candidate lies beyond them with a gap between:
 *   9 in {1, 2, 3, 9} or {0, 1, 8, 9}, but not in {1, …, 9}.
 * - far-out: the candidate lies beyond Tukey's far-out fence of the other values, q3 + 3·IQR or
 *   q1 − 3·IQR, and at least one IQR away from the nearest of them (999 among blood pressures, but not
 *   99 among ages, nor a 99 just past a 98.1 in a long tail).
 *
 * "Other values" leaves out every candidate, so 998 and 999 together do not hide each other. A
 * candidate the codebook documents in its enum or labels is a code by decision and not flagged.
 * Numeric columns are examined, and text columns at least half of whose values are numbers; key
 * columns are identifiers, not measurements, and are left out by the caller.
 */
export async function sentinelFlags(ctx: ColumnContext): Promise<Flag[]> {
  const flags = await declaredMissing(ctx);
  const x = numericExpression(ctx);
  if (!x) return flags;
  const declared = new Set(ctx.missingCodes);
  const documented = new Set([...(ctx.field?.constraints.enum ?? []), ...Object.keys(ctx.field?.labels ?? {})]);
  // Per distinct value, so text columns convert each spelling once.
  const present = await ctx.session.all<{ value: number; count: bigint }>(
    `SELECT x AS value, sum(k) AS count
     FROM (SELECT ${x} AS x, ${ctx.count} AS k FROM ${ident(ctx.counts)})
     WHERE x IN (${SENTINEL_CANDIDATES.join(', ')})
     GROUP BY x
     ORDER BY x`,
  );
  const candidates = present.filter((p) => !declared.has(String(p.value)) && !documented.has(String(p.value)));
  if (candidates.length === 0) return flags;
  const excluded = [...SENTINEL_CANDIDATES, ...ctx.missingCodes.map(Number).filter(Number.isFinite)];
  const rest = await restStats(ctx, x, excluded);
  if (!rest) return flags;
  const isCodeSet = rest.whole && rest.kinds <= CODE_SET_MAX && rest.hi - rest.lo + 1 <= 2 * rest.kinds;
  const codes = isCodeSet ? await distinctValues(ctx, x) : null;
  for (const candidate of candidates) {
    const value = Number(candidate.value);
    const reason =
      value < 0 && rest.lo >= 0
        ? 'negative'
        : codes
          ? standsApartFromCodes(value, codes, rest.lo, rest.hi)
          : rest.n >= FAR_OUT_MIN_REST && isFarOut(value, rest.q1, rest.q3, rest.lo, rest.hi)
            ? 'far-out'
            : null;
    if (!reason) continue;
    const count = Number(candidate.count);
    const rows = plural(count, 'row');
    const range = `${formatBound(rest.lo)} to ${formatBound(rest.hi)}`;
    const message =
      reason === 'code-gap'
        ? `${value} (${rows}) stands apart from the other codes (${range}), as codes for "not known" often do`
        : reason === 'negative'
          ? `${value} (${rows}) is negative where every other value is zero or more (${range})`
          : `${value} (${rows}) lies far outside the other values (${range}): beyond ${FAR_OUT_IQRS} interquartile ranges from the quartiles, with a gap before it`;
    flags.push({ kind: 'sentinel', message, value: String(value), count, reason, keys: await exampleKeys(ctx, `${x} = $1`, [value]) });
  }
  return flags;
}

/** Values the codebook declares missing that rows still hold. */
async function declaredMissing(ctx: ColumnContext): Promise<Flag[]> {
  if (ctx.missingCodes.length === 0) return [];
  const { values } = await valuesWhere(ctx, `${ctx.text} IN (${placeholders(ctx.missingCodes.length)})`, ctx.missingCodes);
  const flags: Flag[] = [];
  for (const { value, count } of values) {
    flags.push({
      kind: 'sentinel',
      message: `"${value}" is declared missing in the codebook, but ${plural(count, 'row')} still hold${count === 1 ? 's' : ''} it as a value; a \`missing\` correction makes ${count === 1 ? 'it' : 'them'} missing`,
      value,
      count,
      reason: 'declared-missing',
      keys: await exampleKeys(ctx, `${ctx.text} = $1`, [value]),
    });
  }
  return flags;
}

/** SQL for the column as a number: itself when numeric; for text mostly of numbers, the values that are. */
function numericExpression(ctx: ColumnContext): string | null {
  if (ctx.type === 'integer' || ctx.type === 'number') return `CAST(${ctx.v} AS DOUBLE)`;
  if (!ctx.shape || ctx.shape.numbers === 0 || ctx.shape.numbers < 0.5 * ctx.shape.n) return null;
  return `(CASE WHEN ${fitsTypeSql(ctx.v, 'number')} THEN TRY_CAST(${ctx.v} AS DOUBLE) END)`;
}

/**
 * Count, range, quartiles and distinct values of the column without the excluded values, from its
 * distinct values and their counts (one pass to group, then work proportional to the distinct values).
 * Quartiles are type 7 (counted-quartiles.ts).
 */
async function restStats(ctx: ColumnContext, x: string, excluded: readonly number[]): Promise<RestStats | null> {
  const kept = `(SELECT x, sum(k) AS k
       FROM (SELECT ${x} AS x, ${ctx.count} AS k FROM ${ident(ctx.counts)})
       WHERE x IS NOT NULL AND x NOT IN (${excluded.join(', ')})
       GROUP BY x)`;
  const row = await ctx.session.one<{ n: bigint | null; lo: number; hi: number; kinds: bigint; whole: boolean; q1_a: number; q1_b: number; q3_a: number; q3_b: number }>(
    `SELECT min(total) AS n, min(x) AS lo, max(x) AS hi, count(*) AS kinds, bool_and(x = trunc(x)) AS whole,
       ${quantileRanksSql(0.25, 'q1')}, ${quantileRanksSql(0.75, 'q3')}
     FROM ${rankedCounts(kept)}`,
  );
  if (row.n === null || Number(row.n) === 0) return null;
  const n = Number(row.n);
  return { n, lo: row.lo, hi: row.hi, q1: type7(n, 0.25, row.q1_a, row.q1_b), q3: type7(n, 0.75, row.q3_a, row.q3_b), kinds: Number(row.kinds), whole: row.whole };
}

async function distinctValues(ctx: ColumnContext, x: string): Promise<number[]> {
  const rows = await ctx.session.all<{ x: number }>(
    `SELECT DISTINCT ${x} AS x FROM ${ident(ctx.counts)} WHERE ${x} IS NOT NULL ORDER BY x`,
  );
  return rows.map((r) => Number(r.x));
}

/**
 * In a code set, a candidate beyond the other codes is apart from them unless every whole number
 * between it and them is also a code: 9 in {1, …, 9} continues the scale, 9 in {1, 2, 3, 9} does not.
 */
export function standsApartFromCodes(value: number, codes: readonly number[], lo: number, hi: number): 'code-gap' | null {
  if (value >= lo && value <= hi) return null;
  const present = new Set(codes);
  const [from, to] = value > hi ? [hi, value] : [value, lo];
  if (to - from > codes.length) return 'code-gap';
  for (let code = from + 1; code < to; code += 1) if (!present.has(code)) return 'code-gap';
  return null;
}

/**
 * Beyond Tukey's far-out fence of the other values (q3 + 3·IQR, q1 − 3·IQR) and apart from them: at
 * least one IQR from the nearest of them, so the tail of a wide distribution (a 99 just past a 98.1)
 * is not taken for a code.
 */
export function isFarOut(value: number, q1: number, q3: number, lo: number, hi: number): boolean {
  const iqr = q3 - q1;
  if (value > hi) return value > q3 + FAR_OUT_IQRS * iqr && value - hi >= iqr;
  if (value < lo) return value < q1 - FAR_OUT_IQRS * iqr && lo - value >= iqr;
  return false;
}

function formatBound(value: number): string {
  return Number.isInteger(value) ? String(value) : String(Number(value.toPrecision(6)));
}
