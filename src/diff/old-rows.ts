import { isUtf8 } from 'node:buffer';
import { FIT_COMBINATIONS, LineCounter } from '../engine/csv-kernel.js';
import { LineWindow, NEWLINE } from './line-window.js';

/**
 * The aligned scan's first pass over the old file (see aligned-scan.ts), one stretch of whole lines
 * at a time, so two stretches can be counted on two threads: each row's key hashes, and
 * each column's values by the combination of types they fit. Kept free of the engine, so a worker
 * thread loads only this.
 */
export interface RowStretch {
  file: string;
  /** File offset of the stretch's first line, and of the byte after its last. */
  start: number;
  end: number;
  delimiter: number;
  width: number;
  keyColumns: readonly number[];
  windowBytes: number;
  /** Lines end in CR LF (as the header does), not LF alone. */
  crlf: boolean;
}

export interface StretchRows {
  rows: number;
  /** Per column, FIT_COMBINATIONS counts: the values whose fits (text-fits.ts) are each combination of flags. */
  combinations: Float64Array<ArrayBuffer>;
  /** Per row: its key's two hashes. */
  first: Int32Array<ArrayBuffer>;
  second: Int32Array<ArrayBuffer>;
}

export { FIT_COMBINATIONS };
export const QUOTE = 34;
export const CARRIAGE_RETURN = 13;

/** The scan cannot read these files exactly as the engine would; the reason says why. */
export class Unsuitable extends Error {}

export function unsuitable(reason: string): never {
  throw new Unsuitable(reason);
}

/**
 * Count a stretch of the old file (whole lines, no header). Every row must be as wide as the header
 * and hold its key, and end as the header does (LF, or CR LF); fields may be quoted, but a quoted field
 * may not hold a line break (so that a line is a row). The stretch must be UTF-8 without NUL bytes.
 * The lines themselves are read by `count` in csv-kernel.wat, a block at a time.
 */
export function countStretch(stretch: RowStretch, onBlock?: (share: number) => void): StretchRows {
  const { delimiter, width, crlf } = stretch;
  const window = new LineWindow(stretch.file, stretch.windowBytes * 2, stretch.start, stretch.end);
  const combinations = new Float64Array(width * FIT_COMBINATIONS);
  const counter = new LineCounter(width, stretch.keyColumns, [delimiter, QUOTE], crlf);
  let capacity = Math.max(1 << 12, Math.ceil((stretch.end - stretch.start) / Math.max(1, averageLine(window))));
  let first = new Int32Array(capacity);
  let second = new Int32Array(capacity);
  let rows = 0;
  try {
    while (window.fill(stretch.windowBytes) > 0) {
      const { buf, pos, end } = window;
      const block = buf.subarray(pos, end);
      if (block.includes(0)) unsuitable('NUL byte');
      if (!isUtf8(block)) unsuitable('not UTF-8');
      if (crlf ? countOf(block, CARRIAGE_RETURN) !== countOf(block, NEWLINE) : block.includes(CARRIAGE_RETURN)) unsuitable('carriage returns other than line ends');
      const counted = counter.count(block);
      if ('refused' in counted) unsuitable(counted.refused);
      counter.takeCounts(combinations);
      if (rows + counted.rows > capacity) {
        while (rows + counted.rows > capacity) capacity *= 2;
        first = grown(first, new Int32Array(capacity));
        second = grown(second, new Int32Array(capacity));
      }
      const hashes = counter.hashes(counted.rows);
      first.set(hashes.first, rows);
      second.set(hashes.second, rows);
      rows += counted.rows;
      window.pos = end;
      onBlock?.((window.offset - stretch.start) / Math.max(1, stretch.end - stretch.start));
    }
    return { rows, combinations, first, second };
  } finally {
    window.close();
  }
}

function countOf(bytes: Buffer, byte: number): number {
  let count = 0;
  for (let at = bytes.indexOf(byte); at >= 0; at = bytes.indexOf(byte, at + 1)) count += 1;
  return count;
}

/** Bytes per line over the first block of the window from its cursor. */
export function averageLine(window: LineWindow): number {
  window.fill(1 << 16);
  let lines = 0;
  for (let at = window.buf.indexOf(NEWLINE, window.pos); at >= 0 && at < window.end; at = window.buf.indexOf(NEWLINE, at + 1)) lines += 1;
  return lines ? (window.end - window.pos) / lines : window.end - window.pos;
}

function grown(array: Int32Array<ArrayBuffer>, bigger: Int32Array<ArrayBuffer>): Int32Array<ArrayBuffer> {
  bigger.set(array);
  return bigger;
}

const HASH_SEED_1 = 0x811c9dc5 | 0;
const HASH_SEED_2 = 0x9e3779b9 | 0;
/** Mixed in after each key column, so ("ab", "c") and ("a", "bc") differ. */
const KEY_PART = 0x1ff;

function finish(h: number): number {
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b);
  return h ^ (h >>> 13);
}

/**
 * A line's key as the two hashes countStretch gives it, or null if it has none or if a key field is
 * quoted with a quote inside (no old key is: countStretch refuses them). The kernel's `count` mixes the
 * same way; tests/engine/csv-kernel.test.ts checks that the two agree.
 */
export function keyHashes(buf: Buffer, start: number, stop: number, delimiter: number, keyColumns: readonly number[]): { h1: number; h2: number } | null {
  if (stop > start && buf[stop - 1] === CARRIAGE_RETURN) stop -= 1;
  const last = Math.max(...keyColumns);
  let h1 = HASH_SEED_1;
  let h2 = HASH_SEED_2;
  for (let column = 0, fieldStart = start; column <= last; column += 1) {
    if (fieldStart > stop) return null;
    let valueStart = fieldStart;
    let valueEnd: number;
    if (buf[fieldStart] === QUOTE) {
      const close = buf.indexOf(QUOTE, fieldStart + 1);
      if (close < 0 || close >= stop || buf[close + 1] === QUOTE) return null;
      valueStart += 1;
      valueEnd = close;
      fieldStart = close + 2;
    } else {
      const next = buf.indexOf(delimiter, fieldStart);
      valueEnd = next < 0 || next > stop ? stop : next;
      fieldStart = valueEnd + 1;
    }
    if (!keyColumns.includes(column)) continue;
    if (valueEnd === valueStart) return null;
    for (let j = valueStart; j < valueEnd; j += 1) {
      h1 = Math.imul(h1 ^ buf[j], 0x01000193);
      h2 = Math.imul(h2 ^ buf[j], 0x5bd1e995) ^ (h2 >>> 15);
    }
    h1 = Math.imul(h1 ^ KEY_PART, 0x01000193);
    h2 = Math.imul(h2 ^ KEY_PART, 0x5bd1e995) ^ (h2 >>> 15);
  }
  return { h1: finish(h1), h2 };
}
