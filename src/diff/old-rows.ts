import { isUtf8 } from 'node:buffer';
import { textFits } from '../engine/text-fits.js';
import { LineWindow, NEWLINE } from './line-window.js';

/**
 * The aligned scan's first pass over the old file (see aligned-scan.ts), one stretch of whole lines
 * at a time, so two stretches can be counted on two threads: each row's offset and key hashes, and
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
}

export interface StretchRows {
  rows: number;
  /** Per column, FIT_COMBINATIONS counts: the values whose textFits is each combination of flags. */
  combinations: Float64Array<ArrayBuffer>;
  /** Per row: its line's file offset, and its key's two hashes. */
  offsets: Float64Array<ArrayBuffer>;
  first: Int32Array<ArrayBuffer>;
  second: Int32Array<ArrayBuffer>;
}

export const FIT_COMBINATIONS = 32;
export const QUOTE = 34;
export const CARRIAGE_RETURN = 13;

/** The scan cannot read these files exactly as the engine would; the reason says why. */
export class Unsuitable extends Error {}

export function unsuitable(reason: string): never {
  throw new Unsuitable(reason);
}

/**
 * Count a stretch of the old file (whole lines, no header). Every row must be as wide as the header
 * and hold its key; the stretch must be UTF-8 without quotes, carriage returns or NUL bytes.
 */
export function countStretch(stretch: RowStretch): StretchRows {
  const { delimiter, width } = stretch;
  const window = new LineWindow(stretch.file, stretch.windowBytes * 2, stretch.start, stretch.end);
  // One count per column and combination of fits: one addition per value, summed up at the end.
  const combinations = new Float64Array(width * FIT_COMBINATIONS);
  const isKey = new Uint8Array(width);
  for (const c of stretch.keyColumns) isKey[c] = 1;
  let capacity = Math.max(1 << 12, Math.ceil((stretch.end - stretch.start) / Math.max(1, averageLine(window))));
  let offsets = new Float64Array(capacity);
  let first = new Int32Array(capacity);
  let second = new Int32Array(capacity);
  let rows = 0;
  try {
    while (window.fill(stretch.windowBytes) > 0) {
      const { buf, pos, end } = window;
      const block = buf.subarray(pos, end);
      if (block.includes(QUOTE)) unsuitable('quotes');
      if (block.includes(CARRIAGE_RETURN)) unsuitable('carriage returns');
      if (block.includes(0)) unsuitable('NUL byte');
      if (!isUtf8(block)) unsuitable('not UTF-8');
      let column = 0;
      let fieldStart = pos;
      let lineStart = pos;
      let h1 = HASH_SEED_1;
      let h2 = HASH_SEED_2;
      for (let i = pos; i < end; i += 1) {
        const byte = buf[i];
        if (byte !== delimiter && byte !== NEWLINE) continue;
        if (column >= width) unsuitable('ragged row');
        if (isKey[column] === 1) {
          if (i === fieldStart || buf[fieldStart] <= 32 || buf[i - 1] <= 32) unsuitable('missing or padded key');
          // The mixing of keyHashes, written out here where it runs for every row.
          for (let j = fieldStart; j < i; j += 1) {
            h1 = Math.imul(h1 ^ buf[j], 0x01000193);
            h2 = Math.imul(h2 ^ buf[j], 0x5bd1e995) ^ (h2 >>> 15);
          }
          h1 = Math.imul(h1 ^ KEY_PART, 0x01000193);
          h2 = Math.imul(h2 ^ KEY_PART, 0x5bd1e995) ^ (h2 >>> 15);
        } else if (i > fieldStart) {
          combinations[column * FIT_COMBINATIONS + textFits(buf, fieldStart, i)] += 1;
        }
        column += 1;
        fieldStart = i + 1;
        if (byte === NEWLINE) {
          if (column !== width) unsuitable('ragged row');
          if (rows === capacity) {
            capacity *= 2;
            offsets = grown(offsets, new Float64Array(capacity));
            first = grown(first, new Int32Array(capacity));
            second = grown(second, new Int32Array(capacity));
          }
          offsets[rows] = window.base + lineStart;
          first[rows] = finish(h1);
          second[rows] = h2;
          rows += 1;
          column = 0;
          lineStart = i + 1;
          h1 = HASH_SEED_1;
          h2 = HASH_SEED_2;
        }
      }
      window.pos = end;
    }
    return { rows, combinations, offsets, first, second };
  } finally {
    window.close();
  }
}

/** Bytes per line over the first block of the stretch. */
function averageLine(window: LineWindow): number {
  window.fill(1 << 16);
  let lines = 0;
  for (let at = window.buf.indexOf(NEWLINE, window.pos); at >= 0 && at < window.end; at = window.buf.indexOf(NEWLINE, at + 1)) lines += 1;
  return lines ? (window.end - window.pos) / lines : window.end - window.pos;
}

function grown<T extends Float64Array<ArrayBuffer> | Int32Array<ArrayBuffer>>(array: T, bigger: T): T {
  bigger.set(array as never);
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

/** A line's key: its text (for equality) and the hashes countStretch gives it, or null if it has none. */
export function keyHashes(buf: Buffer, start: number, stop: number, delimiter: number, keyColumns: readonly number[]): { text: string; h1: number; h2: number } | null {
  const last = Math.max(...keyColumns);
  let h1 = HASH_SEED_1;
  let h2 = HASH_SEED_2;
  let text = '';
  let column = 0;
  let fieldStart = start;
  for (let i = start; i <= stop && column <= last; i += 1) {
    if (i < stop && buf[i] !== delimiter) continue;
    if (keyColumns.includes(column)) {
      if (i === fieldStart) return null;
      for (let j = fieldStart; j < i; j += 1) {
        h1 = Math.imul(h1 ^ buf[j], 0x01000193);
        h2 = Math.imul(h2 ^ buf[j], 0x5bd1e995) ^ (h2 >>> 15);
      }
      h1 = Math.imul(h1 ^ KEY_PART, 0x01000193);
      h2 = Math.imul(h2 ^ KEY_PART, 0x5bd1e995) ^ (h2 >>> 15);
      text += `${buf.toString('latin1', fieldStart, i)}\u0000`;
    }
    column += 1;
    fieldStart = i + 1;
  }
  return column > last ? { text, h1: finish(h1), h2 } : null;
}
