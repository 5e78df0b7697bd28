import { isUtf8 } from 'node:buffer';
import { textFits } from '../engine/text-fits.js';
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
  /** Per column, FIT_COMBINATIONS counts: the values whose textFits is each combination of flags. */
  combinations: Float64Array<ArrayBuffer>;
  /** Per row: its key's two hashes. */
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
 * and hold its key, and end as the header does (LF, or CR LF); fields may be quoted, but a quoted field
 * may not hold a line break (so that a line is a row). The stretch must be UTF-8 without NUL bytes.
 */
export function countStretch(stretch: RowStretch, onBlock?: (share: number) => void): StretchRows {
  const { delimiter, width, crlf } = stretch;
  const window = new LineWindow(stretch.file, stretch.windowBytes * 2, stretch.start, stretch.end);
  // One count per column and combination of fits: one addition per value, summed up at the end.
  const combinations = new Float64Array(width * FIT_COMBINATIONS);
  const isKey = new Uint8Array(width);
  for (const c of stretch.keyColumns) isKey[c] = 1;
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
      let column = 0;
      let fieldStart = pos;
      let lineStop = -1;
      /** The closing quote of the current field, or -1 when it is not quoted. */
      let closed = -1;
      let h1 = HASH_SEED_1;
      let h2 = HASH_SEED_2;
      for (let i = pos; i < end; i += 1) {
        const byte = buf[i];
        if (byte !== delimiter && byte !== NEWLINE && byte !== QUOTE) continue;
        if (byte === QUOTE) {
          if (i !== fieldStart) unsuitable('quote inside an unquoted field');
          if (lineStop < i) lineStop = buf.indexOf(NEWLINE, i);
          closed = closingQuote(buf, i, lineStop);
          i = closed;
          continue;
        }
        let valueStart = fieldStart;
        let valueEnd = i;
        if (byte === NEWLINE && crlf) {
          if (buf[i - 1] !== CARRIAGE_RETURN) unsuitable('a line without CR LF');
          valueEnd -= 1;
        }
        if (closed >= 0) {
          if (valueEnd !== closed + 1) unsuitable('text after a closing quote');
          valueStart += 1;
          valueEnd -= 1;
        }
        if (column >= width) unsuitable('ragged row');
        if (isKey[column] === 1) {
          if (valueEnd === valueStart || buf[valueStart] <= 32 || buf[valueEnd - 1] <= 32) unsuitable('missing or padded key');
          const quote = closed >= 0 ? buf.indexOf(QUOTE, valueStart) : -1;
          if (quote >= 0 && quote < valueEnd) unsuitable('quote in a key');
          // The mixing of keyHashes, written out here where it runs for every row.
          for (let j = valueStart; j < valueEnd; j += 1) {
            h1 = Math.imul(h1 ^ buf[j], 0x01000193);
            h2 = Math.imul(h2 ^ buf[j], 0x5bd1e995) ^ (h2 >>> 15);
          }
          h1 = Math.imul(h1 ^ KEY_PART, 0x01000193);
          h2 = Math.imul(h2 ^ KEY_PART, 0x5bd1e995) ^ (h2 >>> 15);
        } else if (valueEnd > valueStart) {
          // A value holding a (doubled) quote fits no type, and textFits says so.
          combinations[column * FIT_COMBINATIONS + textFits(buf, valueStart, valueEnd)] += 1;
        } else if (closed >= 0) {
          combinations[column * FIT_COMBINATIONS] += 1; // "" is the empty string, not missing
        }
        closed = -1;
        column += 1;
        fieldStart = i + 1;
        if (byte === NEWLINE) {
          if (column !== width) unsuitable('ragged row');
          if (rows === capacity) {
            capacity *= 2;
            first = grown(first, new Int32Array(capacity));
            second = grown(second, new Int32Array(capacity));
          }
          first[rows] = finish(h1);
          second[rows] = h2;
          rows += 1;
          column = 0;
          h1 = HASH_SEED_1;
          h2 = HASH_SEED_2;
        }
      }
      window.pos = end;
      onBlock?.((window.offset - stretch.start) / Math.max(1, stretch.end - stretch.start));
    }
    return { rows, combinations, first, second };
  } finally {
    window.close();
  }
}

/** The quote closing the field opened at `open`, before the line's end; a doubled quote is one quote. */
function closingQuote(buf: Buffer, open: number, lineStop: number): number {
  for (let at = open + 1; ; at += 2) {
    at = buf.indexOf(QUOTE, at);
    if (at < 0 || at > lineStop) unsuitable('line break inside quotes');
    if (buf[at + 1] !== QUOTE) return at;
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
 * quoted with a quote inside (no old key is: countStretch refuses them).
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
