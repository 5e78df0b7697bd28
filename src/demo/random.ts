/**
 * A small seeded random source for the demo study. Written out here (mulberry32) so the same seed gives
 * the same cohort on every machine and Node version; Math.random cannot be seeded.
 */
export interface Random {
  /** A number in [0, 1). */
  next(): number;
  /** A whole number from `min` to `max`, both included. */
  int(min: number, max: number): number;
  /**
   * An approximately normal draw: the sum of twelve uniforms (Irwin–Hall), which uses only additions,
   * so it is exact and identical everywhere (unlike Box–Muller's log and cos).
   */
  normal(mean: number, sd: number): number;
  /** One of `choices`, drawn with the given weights. */
  weighted<T>(choices: ReadonlyArray<readonly [T, number]>): T;
}

/**
 * @example
 * const random = createRandom(20250127);
 * random.int(40, 79); // the same age on every run
 */
export function createRandom(seed: number): Random {
  let state = seed >>> 0;
  const next = (): number => {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  return {
    next,
    int: (min, max) => min + Math.floor(next() * (max - min + 1)),
    normal(mean, sd) {
      let sum = 0;
      for (let i = 0; i < 12; i += 1) sum += next();
      return mean + sd * (sum - 6);
    },
    weighted<T>(choices: ReadonlyArray<readonly [T, number]>): T {
      const total = choices.reduce((s, [, w]) => s + w, 0);
      let draw = next() * total;
      for (const [value, weight] of choices) {
        draw -= weight;
        if (draw < 0) return value;
      }
      return choices[choices.length - 1][0];
    },
  };
}
