/*
 * Hyndman–Fan type 7 quantiles from distinct values and their counts rather than from the rows: with N
 * values in order, q_p = x₍r₎ + (h − r)(x₍r+1₎ − x₍r₎), where h = (N − 1)·p, r = ⌊h⌋ and x₍i₎ is the value of
 * 0-based rank i, which is the smallest value whose cumulative count exceeds i.
 */

/** A relation of `kept` (columns x, a value, and k, its count) with each value's cumulative count and the total. */
export function rankedCounts(kept: string): string {
  return `(SELECT x, sum(k) OVER (ORDER BY x) AS upto, sum(k) OVER () AS total FROM ${kept})`;
}

/** SQL aggregates over `rankedCounts`: the values of rank r and r + 1 for p, as "<name>_a" and "<name>_b". */
export function quantileRanksSql(p: number, name: string): string {
  const r = `floor((total - 1) * ${p})`;
  return `min(x) FILTER (WHERE upto > ${r}) AS "${name}_a", min(x) FILTER (WHERE upto > least(total - 1, ${r} + 1)) AS "${name}_b"`;
}

/** The quantile p of n values from the two values `quantileRanksSql` found. */
export function type7(n: number, p: number, below: number, above: number): number {
  const h = (n - 1) * p;
  return below + (h - Math.floor(h)) * (above - below);
}
