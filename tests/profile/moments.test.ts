import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { Session } from '../../src/engine/session.js';
import { columnMoments } from '../../src/profile/moments.js';
import { removeDir, tempDir } from '../helpers/project.js';
import { agreeingDigits, columnOf, profileCsv } from './profile-fixtures.js';

/*
 * NIST Statistical Reference Datasets (StRD), univariate summary statistics, "lower difficulty"
 * NumAcc1 and "average/higher difficulty" NumAcc2–NumAcc4 (https://www.itl.nist.gov/div898/strd/univ/).
 * The data and certified values are written out here from memory of the NIST pages, not copied from a
 * download:
 *   NumAcc1: 10000001, 10000003, 10000002; certified mean 10000002, standard deviation 1.
 *   NumAcc2–4: 1001 values, the first x.2 then 500 pairs x.1, x.3, for x = 1, 1000000, 10000000;
 *   certified mean x.2, standard deviation 0.1.
 * The standard deviation is the sample one (divisor n − 1). The bar is 9 agreeing significant digits.
 */
function numAcc(x: string): string[] {
  const values = [`${x}.2`];
  for (let i = 0; i < 500; i += 1) values.push(`${x}.1`, `${x}.3`);
  return values;
}

const DATASETS = [
  { name: 'NumAcc1', values: ['10000001', '10000003', '10000002'], mean: 10000002, sd: 1 },
  { name: 'NumAcc2', values: numAcc('1'), mean: 1.2, sd: 0.1 },
  { name: 'NumAcc3', values: numAcc('1000000'), mean: 1000000.2, sd: 0.1 },
  { name: 'NumAcc4', values: numAcc('10000000'), mean: 10000000.2, sd: 0.1 },
];

describe('mean and standard deviation against the NIST StRD', () => {
  it.each(DATASETS)('$name: mean and sd agree with the certified values to at least 9 significant digits', async ({ values, mean, sd }) => {
    const profile = await profileCsv(`x\n${values.join('\n')}\n`);
    const x = columnOf(profile, 'x');
    expect(x.n).toBe(values.length);
    expect(agreeingDigits(x.mean!, mean)).toBeGreaterThanOrEqual(9);
    expect(agreeingDigits(x.sd!, sd)).toBeGreaterThanOrEqual(9);
  });

  it('NumAcc2–4 are 1001 values as the NIST pages describe them', () => {
    for (const x of ['1', '1000000', '10000000']) {
      const values = numAcc(x);
      expect(values).toHaveLength(1001);
      expect(values.slice(0, 4)).toEqual([`${x}.2`, `${x}.1`, `${x}.3`, `${x}.1`]);
      expect(values.at(-1)).toBe(`${x}.3`);
    }
  });
});

describe('the floating-point fallback', () => {
  const dirs: string[] = [];
  afterAll(() => dirs.forEach(removeDir));

  /** With `grouped`, from the distinct values and their counts, as the profile computes them. */
  async function momentsOf(values: number[], grouped = false) {
    const dir = tempDir();
    dirs.push(dir);
    const session = await Session.open({ spillDir: path.join(dir, 'spill') });
    try {
      await session.run(`CREATE TABLE t (x DOUBLE)`);
      for (const v of values) await session.run(`INSERT INTO t VALUES ($1)`, [v]);
      if (!grouped) return await columnMoments(session, 't', 'x', 'DOUBLE');
      await session.run(`CREATE TABLE g AS SELECT x, count(*) AS k FROM t GROUP BY x`);
      return await columnMoments(session, 'g', 'x', 'DOUBLE', 'k');
    } finally {
      session.close();
    }
  }

  it('NumAcc2 scaled by 1e-10 (values printed with exponents) takes the fallback and still agrees to 9 digits', async () => {
    // Scaling NumAcc2 by 10^-10 scales the certified mean to 1.2e-10 and the sd to 1e-11 exactly.
    const values = numAcc('1').map((v) => Number(`${v}e-10`));
    for (const grouped of [false, true]) {
      const moments = await momentsOf(values, grouped);
      expect(moments.exact).toBe(false);
      expect(moments.n).toBe(1001);
      expect(agreeingDigits(moments.mean!, 1.2e-10)).toBeGreaterThanOrEqual(9);
      expect(agreeingDigits(moments.sd!, 1e-11)).toBeGreaterThanOrEqual(9);
    }
  });

  it('NumAcc1 shifted to 1e16 (beyond exact decimal scaling) takes the fallback', async () => {
    // 1e16 + {0, 2, 4}: every value is an exact double; mean 1e16 + 2, sd 2 (deviations −2, 2, 0:
    // (4 + 4 + 0) / 2 = 4, sd 2).
    const moments = await momentsOf([1e16 + 0, 1e16 + 4, 1e16 + 2]);
    expect(moments.exact).toBe(false);
    expect(agreeingDigits(moments.mean!, 1e16 + 2)).toBeGreaterThanOrEqual(9);
    expect(moments.sd).toBe(2);
  });

  it('a single value has a mean and no standard deviation', async () => {
    expect(await momentsOf([3.5])).toMatchObject({ n: 1, mean: 3.5, sd: null });
  });
});
