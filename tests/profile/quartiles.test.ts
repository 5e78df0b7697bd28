import { describe, expect, it } from 'vitest';
import { profileValues } from './profile-fixtures.js';

/*
 * Hyndman & Fan (1996), "Sample quantiles in statistical packages", definition 7: with the n values
 * sorted as x(1) ≤ … ≤ x(n), h = (n − 1)·p + 1 and
 *   Q(p) = x(⌊h⌋) + (h − ⌊h⌋) · (x(⌊h⌋ + 1) − x(⌊h⌋)).
 * Each expected quartile below is worked by hand from that definition.
 */
describe('quartiles follow Hyndman–Fan definition 7', () => {
  it('four whole numbers: interpolation between neighbours', async () => {
    // Sorted 1 2 3 4, n = 4.
    // q1: h = 3·0.25 + 1 = 1.75 → x(1) + 0.75·(x(2) − x(1)) = 1 + 0.75·1 = 1.75
    // median: h = 3·0.5 + 1 = 2.5 → 2 + 0.5·(3 − 2) = 2.5
    // q3: h = 3·0.75 + 1 = 3.25 → 3 + 0.25·(4 − 3) = 3.25
    const c = await profileValues('x', ['4', '1', '3', '2']);
    expect([c.q1, c.median, c.q3]).toEqual([1.75, 2.5, 3.25]);
    expect([c.min, c.max]).toEqual([1, 4]);
  });

  it('eleven values with uneven gaps', async () => {
    // Sorted 6 7 15 36 39 40 41 42 43 47 49, n = 11.
    // q1: h = 10·0.25 + 1 = 3.5 → x(3) + 0.5·(x(4) − x(3)) = 15 + 0.5·(36 − 15) = 25.5
    // median: h = 10·0.5 + 1 = 6 → x(6) = 40
    // q3: h = 10·0.75 + 1 = 8.5 → x(8) + 0.5·(x(9) − x(8)) = 42 + 0.5·(43 − 42) = 42.5
    const c = await profileValues('x', ['39', '7', '43', '6', '15', '40', '41', '49', '36', '47', '42']);
    expect([c.q1, c.median, c.q3]).toEqual([25.5, 40, 42.5]);
  });

  it('six values: quarters of the way between order statistics', async () => {
    // Sorted 7 15 36 39 40 41, n = 6.
    // q1: h = 5·0.25 + 1 = 2.25 → 15 + 0.25·(36 − 15) = 20.25
    // median: h = 3.5 → 36 + 0.5·(39 − 36) = 37.5
    // q3: h = 4.75 → 39 + 0.75·(40 − 39) = 39.75
    const c = await profileValues('x', ['40', '7', '39', '41', '15', '36']);
    expect([c.q1, c.median, c.q3]).toEqual([20.25, 37.5, 39.75]);
  });

  it('decimals with a missing value: the missing value is not counted', async () => {
    // Non-missing sorted 0.5 1.5 2.5 3 4, n = 5: h = 4p + 1 falls on whole ranks 2, 3 and 4.
    // q1 = x(2) = 1.5, median = x(3) = 2.5, q3 = x(4) = 3
    const c = await profileValues('x', ['2.5', '', '0.5', '1.5', '4', '3']);
    expect(c.n).toBe(5);
    expect(c.missing).toBe(1);
    expect([c.q1, c.median, c.q3]).toEqual([1.5, 2.5, 3]);
  });

  it('a single value is every quartile', async () => {
    // n = 1: h = 1 for every p, so each quartile is x(1).
    const c = await profileValues('x', ['12']);
    expect([c.min, c.q1, c.median, c.q3, c.max]).toEqual([12, 12, 12, 12, 12]);
  });
});
