import { describe, expect, it } from 'vitest';
import { sturgesBinCount } from '../../src/profile/histogram.js';
import { profileValues } from './profile-fixtures.js';

describe('histogram bins', () => {
  it("Sturges' rule gives ⌈log2 n⌉ + 1 bins", () => {
    // log2 2 = 1 → 2; log2 8 = 3 → 4; log2 9 ≈ 3.17 → 5; log2 1000 ≈ 9.97 → 11.
    expect([1, 2, 8, 9, 1000].map(sturgesBinCount)).toEqual([1, 2, 4, 5, 11]);
  });

  it('a number column: equal widths from min to max, the last bin closed (worked by hand)', async () => {
    // n = 10 → 5 bins; min 0.5, max 9.5, width 9 / 5 = 1.8; edges 0.5 2.3 4.1 5.9 7.7 9.5.
    // [0.5, 2.3): 0.5 1 1.5 2 2.2 → 5;  [2.3, 4.1): 4 → 1;  [4.1, 5.9): none;
    // [5.9, 7.7): 6 7 → 2;  [7.7, 9.5]: 9.5 9.5 → 2 (the maximum belongs to the last bin).
    const c = await profileValues('x', ['0.5', '1', '1.5', '2', '2.2', '4', '6', '7', '9.5', '9.5']);
    expect(c.histogram!.rule).toBe('sturges');
    expect(c.histogram!.bins.map((b) => b.count)).toEqual([5, 1, 0, 2, 2]);
    const edges = [...c.histogram!.bins.map((b) => b.from), c.histogram!.bins.at(-1)!.to];
    [0.5, 2.3, 4.1, 5.9, 7.7, 9.5].forEach((edge, i) => expect(edges[i]).toBeCloseTo(edge, 12));
  });

  it('a whole-number column: whole-number widths (worked by hand)', async () => {
    // n = 10 → k = 5; span 90 − 18 + 1 = 73; width ⌈73 / 5⌉ = 15; ⌈73 / 15⌉ = 5 bins:
    // [18, 33): 18 25 → 2;  [33, 48): 33 41 47 → 3;  [48, 63): 52 60 → 2;  [63, 78): 71 → 1;  [78, 93): 85 90 → 2.
    const c = await profileValues('age', ['33', '18', '90', '41', '25', '52', '60', '71', '85', '47']);
    expect(c.histogram).toEqual({
      rule: 'sturges-integer',
      bins: [
        { from: 18, to: 33, count: 2 },
        { from: 33, to: 48, count: 3 },
        { from: 48, to: 63, count: 2 },
        { from: 63, to: 78, count: 1 },
        { from: 78, to: 93, count: 2 },
      ],
    });
  });

  it('500 pseudo-random values: counts agree with binning each value by its edges in the test', async () => {
    // A linear congruential generator (Numerical Recipes' constants) gives reproducible values in
    // [0, 100), kept to two decimals; the test bins each value itself by comparing with the edges.
    let state = 20260314;
    const next = () => {
      state = (1664525 * state + 1013904223) % 2 ** 32;
      return state / 2 ** 32;
    };
    const values = Array.from({ length: 500 }, () => Math.round((next() * next()) * 10000) / 100);
    const c = await profileValues('x', values.map(String));
    const min = Math.min(...values);
    const max = Math.max(...values);
    const k = Math.ceil(Math.log2(values.length)) + 1; // 500 → ⌈8.97⌉ + 1 = 10
    const width = (max - min) / k;
    const expected = new Array<number>(k).fill(0);
    for (const v of values) {
      let bin = 0;
      while (bin < k - 1 && v >= min + (bin + 1) * width) bin += 1;
      expected[bin] += 1;
    }
    expect(k).toBe(10);
    expect(c.histogram!.bins.map((b) => b.count)).toEqual(expected);
    expect(c.histogram!.bins[0].from).toBe(min);
    expect(c.histogram!.bins.at(-1)!.to).toBe(max);
  });

  it('a column holding one value has one bin', async () => {
    const c = await profileValues('x', ['2.5', '2.5', '2.5']);
    expect(c.histogram!.bins).toEqual([{ from: 2.5, to: 2.5, count: 3 }]);
  });
});
