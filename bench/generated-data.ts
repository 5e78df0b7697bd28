/**
 * Building blocks of the benchmarks' invented data: an independent seeded stream per (seed, index,
 * salt), so any row can be regenerated on its own when a correction needs its values; small helpers to
 * draw values from a stream; day numbers as ISO dates; a seeded shuffle; writing a project file.
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { splitmix32 } from './splitmix.js';

export function streamFor(seed: number, index: number, salt = 0): () => number {
  const mix = splitmix32((seed ^ Math.imul(index + 1, 0x85ebca6b) ^ Math.imul(salt + 1, 0xc2b2ae35)) | 0);
  mix();
  return mix;
}

export const int = (r: () => number, lo: number, hi: number) => lo + Math.floor(r() * (hi - lo + 1));
export const pick = <T>(r: () => number, items: readonly T[]) => items[Math.floor(r() * items.length)];
export const round = (x: number, digits: number) => {
  const f = 10 ** digits;
  return Math.round(x * f) / f;
};
/** Roughly normal: the mean of three uniforms, scaled to [lo, hi]. */
export const bell = (r: () => number, lo: number, hi: number) => lo + ((r() + r() + r()) / 3) * (hi - lo);

const DAY_MS = 86_400_000;
const dayText = new Map<number, string>();
/** A day number (days since 1970-01-01) as YYYY-MM-DD, remembered: the same few thousand days recur. */
export function isoDay(day: number): string {
  let text = dayText.get(day);
  if (!text) {
    text = new Date(day * DAY_MS).toISOString().slice(0, 10);
    dayText.set(day, text);
  }
  return text;
}
export const dayOf = (y: number, m: number, d: number) => Date.UTC(y, m - 1, d) / DAY_MS;

/** A seeded permutation of 0..n-1: deliveries arrive in submission order, not key order. */
export function permutation(seed: number, n: number): Int32Array {
  const order = new Int32Array(n);
  for (let i = 0; i < n; i += 1) order[i] = i;
  const r = streamFor(seed, n, 7);
  for (let i = n - 1; i > 0; i -= 1) {
    const j = Math.floor(r() * (i + 1));
    const t = order[i];
    order[i] = order[j];
    order[j] = t;
  }
  return order;
}

/** Write a project file, creating its folder. */
export function writeText(root: string, relative: string, text: string): void {
  const file = path.join(root, relative);
  mkdirSync(path.dirname(file), { recursive: true });
  writeFileSync(file, text);
}
