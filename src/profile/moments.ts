import type { Session } from '../engine/session.js';
import { ident } from '../engine/sql.js';
import { valueTypeOf } from '../engine/column-types.js';

export interface Moments {
  /** Non-missing values. */
  n: number;
  mean: number | null;
  /** Sample standard deviation (divisor n − 1); null for fewer than two values. */
  sd: number | null;
  /** True when the sums were exact integers (see below); false when the floating-point fallback ran. */
  exact: boolean;
}

/**
 * Scaled values must stay below this for `round(v × 10^s)` to give back exactly the decimal errata
 * prints: far enough under 2^53 that the product's rounding error stays well under one half.
 */
const EXACT_MAGNITUDE = 1e15;
/** HUGEINT holds about 1.7e38 and DuckDB's sum of HUGEINT wraps silently, so the sum of squares must stay clear of it. */
const HUGEINT_HEADROOM = 10n ** 37n;
const MAX_SCALE = 15;

/**
 * Mean and sample standard deviation of a numeric column, as accurate as the data allow.
 *
 * A delivered 10000000.1 is stored as the nearest double, which is off by about 1e-9; summed naively, or
 * even two-pass in floating point, those representation errors limit the standard deviation of values
 * near 1e7 to about 8 significant digits (NIST StRD NumAcc4). So each value is taken as the decimal
 * errata writes for it, scaled to an integer (×10^s, where s is the most decimals any value has),
 * centred on the midrange, and the sums Σd and Σd² are formed exactly in 128-bit integers. Mean and
 * variance then follow from exact integers:
 *
 *   mean = c + Σd / n        var = (n·Σd² − (Σd)²) / (n·(n − 1))
 *
 * so the only rounding is the final division. When the values are too large, too finely scaled or too
 * many for that (see the limits above), it falls back to a compensated two-pass computation in doubles
 * (Kahan sums; var from Σ(v − m)² − (Σ(v − m))²/n).
 *
 * @example
 *   await columnMoments(session, 'clean_visits', 'height_cm', 'DOUBLE') // { n: 2391, mean: 168.4, sd: 9.7, exact: true }
 */
export async function columnMoments(session: Session, table: string, column: string, sqlType: string, weight?: string): Promise<Moments> {
  const v = ident(column);
  // With a weight, `table` holds distinct values and the weight says how many rows hold each.
  const w = weight ? ident(weight) : '1';
  const integer = valueTypeOf(sqlType) === 'integer';
  const scale = integer
    ? await session.one<{ n: bigint; lo: number | bigint | null; hi: number | bigint | null; s: number | null; awkward: boolean | null }>(`
        SELECT COALESCE(sum(${w}) FILTER (WHERE ${v} IS NOT NULL), 0) AS n, min(${v}) AS lo, max(${v}) AS hi, 0 AS s, false AS awkward
        FROM ${ident(table)}`)
    : await session.one<{ n: bigint; lo: number | bigint | null; hi: number | bigint | null; s: number | null; awkward: boolean | null }>(`
        SELECT
          COALESCE(sum(w) FILTER (WHERE x IS NOT NULL), 0) AS n,
          min(x) AS lo,
          max(x) AS hi,
          max(CASE WHEN x = trunc(x) THEN 0 ELSE length(split_part(CAST(x AS VARCHAR), '.', 2)) END) AS s,
          bool_or(CASE WHEN isfinite(x) AND x <> trunc(x) THEN regexp_matches(CAST(x AS VARCHAR), '[eE]') ELSE NOT isfinite(x) END) AS awkward
        FROM (SELECT CAST(${v} AS DOUBLE) AS x, ${w} AS w FROM ${ident(table)})`);
  const n = Number(scale.n);
  if (n === 0 || scale.lo === null || scale.hi === null) return { n, mean: null, sd: null, exact: true };
  const exact = integer ? await integerSums(session, table, v, w, scale.lo, scale.hi, n) : await decimalSums(session, table, v, w, Number(scale.lo), Number(scale.hi), Number(scale.s ?? 0), Boolean(scale.awkward), n);
  if (exact) return { n, ...fromExactSums(exact, n), exact: true };
  return { n, ...(await floatingMoments(session, table, v, w, n)), exact: false };
}

interface ExactSums {
  /** Centre, in scaled units. */
  centre: bigint;
  /** 10^s: the scaled values are v × unit. */
  unit: number;
  sum: bigint;
  sumSquares: bigint;
}

async function integerSums(session: Session, table: string, v: string, w: string, lo: number | bigint, hi: number | bigint, n: number): Promise<ExactSums | null> {
  const low = BigInt(lo);
  const high = BigInt(hi);
  const centre = (low + high) / 2n;
  if (!fitsHugeint(centre - low > high - centre ? centre - low : high - centre, n)) return null;
  const sums = await session.one<{ s1: bigint; s2: bigint }>(
    `SELECT sum(d * w) AS s1, sum(d * d * w) AS s2
     FROM (SELECT CAST(${v} AS HUGEINT) - CAST($1 AS HUGEINT) AS d, CAST(${w} AS HUGEINT) AS w FROM ${ident(table)} WHERE ${v} IS NOT NULL)`,
    [centre.toString()],
  );
  return { centre, unit: 1, sum: BigInt(sums.s1), sumSquares: BigInt(sums.s2) };
}

async function decimalSums(session: Session, table: string, v: string, w: string, lo: number, hi: number, s: number, awkward: boolean, n: number): Promise<ExactSums | null> {
  if (awkward || s > MAX_SCALE) return null;
  const unit = 10 ** s;
  if (Math.max(Math.abs(lo), Math.abs(hi)) * unit >= EXACT_MAGNITUDE) return null;
  const low = BigInt(Math.round(lo * unit));
  const high = BigInt(Math.round(hi * unit));
  const centre = (low + high) / 2n;
  if (!fitsHugeint(centre - low > high - centre ? centre - low : high - centre, n)) return null;
  const sums = await session.one<{ s1: bigint; s2: bigint }>(
    `SELECT sum(d * w) AS s1, sum(d * d * w) AS s2
     FROM (
       SELECT CAST(round(CAST(${v} AS DOUBLE) * $1) AS HUGEINT) - CAST($2 AS HUGEINT) AS d, CAST(${w} AS HUGEINT) AS w
       FROM ${ident(table)}
       WHERE ${v} IS NOT NULL)`,
    [unit, centre.toString()],
  );
  return { centre, unit, sum: BigInt(sums.s1), sumSquares: BigInt(sums.s2) };
}

/** n values each at most `spread` from the centre: can Σd² overflow? */
function fitsHugeint(spread: bigint, n: number): boolean {
  return BigInt(n) * spread * spread < HUGEINT_HEADROOM;
}

function fromExactSums(sums: ExactSums, n: number): { mean: number; sd: number | null } {
  const count = BigInt(n);
  const mean = Number(sums.centre * count + sums.sum) / n / sums.unit;
  if (n < 2) return { mean, sd: null };
  const numerator = count * sums.sumSquares - sums.sum * sums.sum;
  const variance = Number(numerator) / (n * (n - 1)) / (sums.unit * sums.unit);
  return { mean, sd: Math.sqrt(variance) };
}

async function floatingMoments(session: Session, table: string, v: string, w: string, n: number): Promise<{ mean: number; sd: number | null }> {
  const x = `CAST(${v} AS DOUBLE)`;
  const { total } = await session.one<{ total: number }>(`SELECT fsum(${x} * ${w}) AS total FROM ${ident(table)}`);
  const mean = total / n;
  if (n < 2) return { mean, sd: null };
  const { squares, deviations } = await session.one<{ squares: number; deviations: number }>(
    `SELECT fsum((${x} - $1) * (${x} - $1) * ${w}) AS squares, fsum((${x} - $1) * ${w}) AS deviations FROM ${ident(table)} WHERE ${v} IS NOT NULL`,
    [mean],
  );
  const variance = (squares - (deviations * deviations) / n) / (n - 1);
  return { mean, sd: Math.sqrt(Math.max(0, variance)) };
}
