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
  /** Per row: its line's file offset. */
  offsets: Float64Array<ArrayBuffer>;
  /** The slots of a KeyTable of the stretch's keys, rows numbered from 0 in the stretch. */
  keys: Int32Array<ArrayBuffer>;
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
  const keys = new KeyTable(capacity);
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
            const bigger = new Float64Array(capacity);
            bigger.set(offsets);
            offsets = bigger;
          }
          offsets[rows] = window.base + lineStart;
          if (!keys.insert(finish(h1), h2, rows)) unsuitable('repeated key');
          rows += 1;
          column = 0;
          lineStart = i + 1;
          h1 = HASH_SEED_1;
          h2 = HASH_SEED_2;
        }
      }
      window.pos = end;
    }
    return { rows, combinations, offsets, keys: keys.slots };
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

/**
 * The old rows by key hash (two 32-bit hashes): open addressing, so ten million keys take a few
 * hundred megabytes rather than a JavaScript Map's gigabytes. A slot's hashes and row sit side by
 * side, so a probe touches one cache line. Two keys with both hashes equal are taken as repeated;
 * the engine then checks the whole file and names the rows.
 */
export class KeyTable {
  private mask: number;
  /** Per slot: first hash, second hash, row + 1 (0: free). */
  slots: Int32Array<ArrayBuffer>;
  private count = 0;

  constructor(expected: number) {
    let size = 1 << 12;
    while (size * 6 < expected * 10) size *= 2;
    this.slots = new Int32Array(size * SLOT);
    this.mask = size - 1;
  }

  /** A table made on another thread, from its slots and the number of keys in them. */
  static of(slots: Int32Array<ArrayBuffer>, keys: number): KeyTable {
    const table = new KeyTable(0);
    table.slots = slots;
    table.mask = slots.length / SLOT - 1;
    table.count = keys;
    return table;
  }

  get keys(): number {
    return this.count;
  }

  /** Whether any key of `other` is also here. */
  sharesKeyWith(other: KeyTable): boolean {
    const theirs = other.slots;
    for (let at = 0; at < theirs.length; at += SLOT) if (theirs[at + 2] !== 0 && this.find(theirs[at], theirs[at + 1]) >= 0) return true;
    return false;
  }

  insert(h1: number, h2: number, row: number): boolean {
    if ((this.count + 1) * 10 > (this.mask + 1) * 6) this.resize();
    const slots = this.slots;
    let slot = h1 & this.mask;
    while (slots[slot * SLOT + 2] !== 0) {
      if (slots[slot * SLOT] === h1 && slots[slot * SLOT + 1] === h2) return false;
      slot = (slot + 1) & this.mask;
    }
    slots[slot * SLOT] = h1;
    slots[slot * SLOT + 1] = h2;
    slots[slot * SLOT + 2] = row + 1;
    this.count += 1;
    return true;
  }

  /** The row holding this key, or -1. */
  find(h1: number, h2: number): number {
    const slots = this.slots;
    let slot = h1 & this.mask;
    while (slots[slot * SLOT + 2] !== 0) {
      if (slots[slot * SLOT] === h1 && slots[slot * SLOT + 1] === h2) return slots[slot * SLOT + 2] - 1;
      slot = (slot + 1) & this.mask;
    }
    return -1;
  }

  private resize(): void {
    const old = this.slots;
    this.mask = this.mask * 2 + 1;
    this.slots = new Int32Array((this.mask + 1) * SLOT);
    this.count = 0;
    for (let at = 0; at < old.length; at += SLOT) if (old[at + 2] !== 0) this.insert(old[at], old[at + 1], old[at + 2] - 1);
  }
}

const SLOT = 4;
