import { isUtf8 } from 'node:buffer';
import { closeSync, openSync, readSync, statSync, writeSync } from 'node:fs';
import type { TypeFits } from '../engine/column-types.js';
import { FITS_BOOLEAN, FITS_DATE, FITS_INTEGER, FITS_NUMBER, UNSURE, textFits } from '../engine/text-fits.js';

/**
 * A keyed diff of two delimited files mostly reads rows that did not change: a new delivery repeats
 * most of the old one, in much the same order. This scan streams both files once, side by side,
 * skipping every run of identical lines at memory-compare speed, and writes only the lines that
 * differ to two small files (OLD part and NEW part) for the engine's keyed diff to compare. On the
 * way it counts the old file's type fits over every row and checks its keys, which the engine would
 * otherwise need the whole old file loaded for.
 *
 * The scan takes only files it can read exactly as the engine would: no quote, carriage return or
 * NUL byte, valid UTF-8, the same header on both sides, every old row as wide as the header with a
 * key. Anything else (and rows so far out of order that most lines differ) makes it step aside,
 * saying why, and the engine diffs the whole files as before; so does any problem the engine finds in
 * the parts, so that its message names the real file and line.
 *
 * Lines that differ are paired by the engine, not here: a line is written out whenever the scan is not
 * sure it is identical to the line it stands against, and a row moved elsewhere simply appears in both
 * parts. Only identical lines are left out, so the result cannot depend on how well the scan guessed.
 */
export type AlignedScan =
  | {
      kind: 'aligned';
      /** The header and the old lines that differ. */
      oldPart: string;
      /** The header and the new lines that differ. */
      newPart: string;
      oldRows: number;
      newRows: number;
      /** The old file's type fits of every column but the key, over every row (exactnumber not counted). */
      oldFits: Map<string, TypeFits>;
    }
  | { kind: 'unsuitable'; reason: string };

export interface AlignedScanOptions {
  delimiter: string;
  header: readonly string[];
  key: readonly string[];
  oldPart: string;
  newPart: string;
  /** Bytes kept in view past each cursor (default 4 MiB); tests use small ones to cross many refills. */
  windowBytes?: number;
}

const NEWLINE = 10;
const QUOTE = 34;
const CARRIAGE_RETURN = 13;
/** Bytes kept in view past each cursor. */
const WINDOW = 4 << 20;
/**
 * A new line whose old row lies at most this share of the window ahead means the old lines before it
 * went (or moved on); further ahead, the new line is the one that moved.
 */
const AHEAD_SHARE = 1 / 16;
/** Past this share of differing bytes the files are too far apart for the scan to pay. */
const MOST_DIFFER = 0.3;

class Unsuitable extends Error {}

function unsuitable(reason: string): never {
  throw new Unsuitable(reason);
}

/** Scan OLD and NEW (see above). Synchronous: it holds the thread only while it reads. */
export function scanAligned(oldFile: string, newFile: string, options: AlignedScanOptions): AlignedScan {
  const delimiter = Buffer.from(options.delimiter, 'utf8');
  if (delimiter.length !== 1 || delimiter[0] === QUOTE || delimiter[0] === NEWLINE) return { kind: 'unsuitable', reason: 'delimiter' };
  const keyColumns = options.key.map((k) => options.header.indexOf(k));
  if (keyColumns.some((i) => i < 0)) return { kind: 'unsuitable', reason: 'key column missing' };
  try {
    const window = options.windowBytes ?? WINDOW;
    const old = countOldFile(oldFile, delimiter[0], options.header.length, keyColumns, window);
    const parts = alignFiles(oldFile, newFile, old, delimiter[0], keyColumns, options, window);
    const oldFits = new Map<string, TypeFits>();
    options.header.forEach((name, c) => {
      if (keyColumns.includes(c)) return;
      const at = c * COUNTS;
      const f = old.fits;
      oldFits.set(name, { n: f[at], integer: f[at + 1], number: f[at + 2], boolean: f[at + 3], date: f[at + 4], exactnumber: Number.NaN });
    });
    return { kind: 'aligned', oldPart: options.oldPart, newPart: options.newPart, oldRows: old.rows, newRows: old.rows - parts.oldLines + parts.newLines, oldFits };
  } catch (error) {
    if (error instanceof Unsuitable) return { kind: 'unsuitable', reason: error.message };
    throw error;
  }
}

/** A file read forwards through a buffer that always ends on a whole line. */
class LineWindow {
  buf: Buffer;
  /** File offset of buf[0]. */
  base = 0;
  pos = 0;
  /** End of the whole lines in the buffer. */
  end = 0;
  private filled = 0;
  private eof = false;
  private readonly fd: number;

  constructor(file: string, size: number) {
    this.fd = openSync(file, 'r');
    this.buf = Buffer.allocUnsafe(size);
  }

  close(): void {
    closeSync(this.fd);
  }

  /** Whole lines from pos: at least `want` bytes of them unless the file ends first; 0 at the end. */
  fill(want: number): number {
    while (this.end - this.pos < want && !this.eof) {
      if (this.pos > 0) {
        this.buf.copy(this.buf, 0, this.pos, this.filled);
        this.base += this.pos;
        this.filled -= this.pos;
        this.end -= this.pos;
        this.pos = 0;
      }
      // One byte is kept free for the newline a last line may lack.
      if (this.buf.length - 1 - this.filled < want) {
        const bigger = Buffer.allocUnsafe(Math.max(this.buf.length * 2, want * 2));
        this.buf.copy(bigger, 0, 0, this.filled);
        this.buf = bigger;
      }
      const read = readSync(this.fd, this.buf, this.filled, this.buf.length - 1 - this.filled, null);
      this.filled += read;
      if (read === 0) {
        this.eof = true;
        if (this.filled > this.end && this.buf[this.filled - 1] !== NEWLINE) this.buf[this.filled++] = NEWLINE;
      }
      // (lastIndexOf counts a negative offset from the end of the buffer.)
      this.end = this.filled === 0 ? 0 : this.buf.lastIndexOf(NEWLINE, this.filled - 1) + 1;
    }
    return this.end - this.pos;
  }

  /** The next line's end (its newline) from pos. */
  lineEnd(): number {
    return this.buf.indexOf(NEWLINE, this.pos);
  }

  /** Skip a UTF-8 byte order mark and the header line, returning the header's bytes. */
  header(): Buffer {
    this.fill(1);
    if (this.end >= 3 && this.buf[0] === 0xef && this.buf[1] === 0xbb && this.buf[2] === 0xbf) this.pos = 3;
    if (this.end === this.pos) unsuitable('no header');
    const stop = this.lineEnd();
    const header = Buffer.from(this.buf.subarray(this.pos, stop + 1));
    this.pos = stop + 1;
    return header;
  }
}

/** Per column: non-missing values, then those fitting integer, number, boolean, date. */
const COUNTS = 5;

interface OldFile {
  header: Buffer;
  rows: number;
  fits: Float64Array;
  keys: KeyTable;
  /** File offset of each row's line. */
  offsets: Float64Array;
}

/** Pass 1: the old file's rows, their keys (which must be present and unique) and type fits. */
function countOldFile(file: string, delimiter: number, width: number, keyColumns: number[], windowBytes: number): OldFile {
  const window = new LineWindow(file, windowBytes * 2);
  // One count per column and combination of fits: one addition per value, summed up at the end.
  const combinations = new Float64Array(width * FIT_COMBINATIONS);
  const isKey = new Uint8Array(width);
  for (const c of keyColumns) isKey[c] = 1;
  // Sized from the file's length and its first lines, so the table is seldom rebuilt.
  const expected = Math.ceil(statSync(file).size / Math.max(1, averageLine(window)));
  const keys = new KeyTable(expected);
  let offsets = new Float64Array(Math.max(1 << 16, expected));
  let rows = 0;
  try {
    const header = window.header();
    if (header.includes(QUOTE) || header.includes(CARRIAGE_RETURN)) unsuitable('quoted or CRLF header');
    while (window.fill(windowBytes) > 0) {
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
          if (rows === offsets.length) offsets = grow(offsets);
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
    return { header, rows, fits: fitsOf(combinations, width), keys, offsets };
  } finally {
    window.close();
  }
}

/** Bytes per line over the first block of the file. */
function averageLine(window: LineWindow): number {
  window.fill(1 << 16);
  let lines = 0;
  for (let at = window.buf.indexOf(NEWLINE); at >= 0 && at < window.end; at = window.buf.indexOf(NEWLINE, at + 1)) lines += 1;
  return lines ? window.end / lines : window.end;
}

const FIT_COMBINATIONS = 32;

function fitsOf(combinations: Float64Array, width: number): Float64Array {
  const fits = new Float64Array(width * COUNTS);
  for (let column = 0; column < width; column += 1) {
    for (let f = 0; f < FIT_COMBINATIONS; f += 1) {
      const count = combinations[column * FIT_COMBINATIONS + f];
      if (count === 0) continue;
      if (f & UNSURE) unsuitable('value at the edge of a type');
      const at = column * COUNTS;
      fits[at] += count;
      if (f & FITS_INTEGER) fits[at + 1] += count;
      if (f & FITS_NUMBER) fits[at + 2] += count;
      if (f & FITS_BOOLEAN) fits[at + 3] += count;
      if (f & FITS_DATE) fits[at + 4] += count;
    }
  }
  return fits;
}

function grow(offsets: Float64Array<ArrayBuffer>): Float64Array<ArrayBuffer> {
  const bigger = new Float64Array(offsets.length * 2);
  bigger.set(offsets);
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
 * The old rows by key hash (two 32-bit hashes): open addressing, so ten million keys take a few
 * hundred megabytes rather than a JavaScript Map's gigabytes. A slot's hashes and row sit side by
 * side, so a probe touches one cache line. Two keys with both hashes equal are taken as repeated;
 * the engine then checks the whole file and names the rows.
 */
class KeyTable {
  private mask: number;
  /** Per slot: first hash, second hash, row + 1 (0: free). */
  private slots: Int32Array;
  private count = 0;

  constructor(expected: number) {
    let size = 1 << 16;
    while (size * 6 < expected * 10) size *= 2;
    this.mask = size - 1;
    this.slots = new Int32Array(size * SLOT);
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

/**
 * A line's key: its text (for equality) and hashes, mixed exactly as countOldFile mixes them (written
 * out there, where it runs for every row), or null if the line has no key.
 */
function lineKey(buf: Buffer, start: number, stop: number, delimiter: number, keyColumns: readonly number[]): { text: string; h1: number; h2: number } | null {
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

/** Lines appended to a file through one buffer. */
class LineWriter {
  private readonly fd: number;
  private readonly buf = Buffer.allocUnsafe(1 << 20);
  private used = 0;
  lines = 0;
  bytes = 0;

  constructor(file: string, header: Buffer) {
    this.fd = openSync(file, 'w');
    this.write(header, 0, header.length);
    this.lines = 0;
  }

  write(source: Buffer, start: number, end: number): void {
    const length = end - start;
    if (this.used + length > this.buf.length) this.flush();
    if (length > this.buf.length) writeSync(this.fd, source, start, length);
    else {
      source.copy(this.buf, this.used, start, end);
      this.used += length;
    }
    this.lines += 1;
    this.bytes += length;
  }

  close(): void {
    this.flush();
    closeSync(this.fd);
  }

  private flush(): void {
    if (this.used > 0) writeSync(this.fd, this.buf, 0, this.used);
    this.used = 0;
  }
}

/**
 * Pass 2: walk both files together. Identical runs are skipped; at a line that differs, a new line
 * whose key is not among the old rows, or whose old row lies behind or far ahead, is written to the new
 * part; otherwise the old line is written to the old part (its row went, or moved on). Lines with the
 * same key are both written.
 */
function alignFiles(oldFile: string, newFile: string, old: OldFile, delimiter: number, keyColumns: number[], options: AlignedScanOptions, window: number) {
  const olds = new LineWindow(oldFile, window * 4);
  const news = new LineWindow(newFile, window * 4);
  const aheadLimit = window * AHEAD_SHARE;
  const oldPart = new LineWriter(options.oldPart, old.header);
  const newPart = new LineWriter(options.newPart, old.header);
  const written = new Uint8Array(old.rows);
  /** Old rows holding the key of a written new line: each must be written too, or the key is repeated. */
  const claimed: number[] = [];
  try {
    olds.header();
    if (!news.header().equals(old.header)) unsuitable('headers differ');
    const writeOld = (stop: number) => {
      const key = lineKey(olds.buf, olds.pos, stop, delimiter, keyColumns);
      const row = key ? old.keys.find(key.h1, key.h2) : -1;
      if (row < 0 || old.offsets[row] !== olds.base + olds.pos) unsuitable('old line not found by its key');
      written[row] = 1;
      oldPart.write(olds.buf, olds.pos, stop + 1);
      olds.pos = stop + 1;
    };
    const writeNew = (stop: number, key: { h1: number; h2: number } | null) => {
      const line = news.buf.subarray(news.pos, stop + 1);
      if (line.includes(QUOTE) || line.includes(CARRIAGE_RETURN)) unsuitable('quotes or carriage returns in the new file');
      const row = key ? old.keys.find(key.h1, key.h2) : -1;
      if (row >= 0) claimed.push(row);
      newPart.write(news.buf, news.pos, stop + 1);
      news.pos = stop + 1;
    };
    let seen = 0;
    for (;;) {
      const oldLeft = olds.fill(window);
      const newLeft = news.fill(window);
      if (oldLeft === 0 && newLeft === 0) break;
      if (newLeft === 0) {
        writeOld(olds.lineEnd());
        continue;
      }
      if (oldLeft === 0) {
        const stop = news.lineEnd();
        writeNew(stop, lineKey(news.buf, news.pos, stop, delimiter, keyColumns));
        continue;
      }
      const same = commonPrefix(olds.buf, olds.pos, news.buf, news.pos, Math.min(oldLeft, newLeft));
      if (same > 0) {
        const lastLine = olds.buf.lastIndexOf(NEWLINE, olds.pos + same - 1);
        if (lastLine >= olds.pos) {
          const skip = lastLine + 1 - olds.pos;
          olds.pos += skip;
          news.pos += skip;
          seen += skip;
          continue;
        }
      }
      const oldStop = olds.lineEnd();
      const newStop = news.lineEnd();
      seen += newStop + 1 - news.pos;
      const oldKey = lineKey(olds.buf, olds.pos, oldStop, delimiter, keyColumns);
      const newKey = lineKey(news.buf, news.pos, newStop, delimiter, keyColumns);
      if (newKey && oldKey && newKey.text === oldKey.text) {
        writeOld(oldStop);
        writeNew(newStop, newKey);
      } else {
        const row = newKey ? old.keys.find(newKey.h1, newKey.h2) : -1;
        const ahead = row < 0 ? -1 : old.offsets[row] - (olds.base + olds.pos);
        if (ahead >= 0 && ahead <= aheadLimit) writeOld(oldStop);
        else writeNew(newStop, newKey);
      }
      if (seen > window && oldPart.bytes + newPart.bytes > MOST_DIFFER * 2 * seen) unsuitable('most lines differ');
    }
    for (const row of claimed) if (written[row] === 0) unsuitable('a key of the new file is repeated');
    return { oldLines: oldPart.lines, newLines: newPart.lines };
  } finally {
    olds.close();
    news.close();
    oldPart.close();
    newPart.close();
  }
}

/**
 * How many bytes from a[ai] and b[bi] are equal (at most `max`): galloping compares, so a long equal
 * run costs a few memory compares and a difference is found in a few more.
 */
function commonPrefix(a: Buffer, ai: number, b: Buffer, bi: number, max: number): number {
  let same = 0;
  let step = 512;
  while (same < max) {
    const length = Math.min(step, max - same);
    if (a.compare(b, bi + same, bi + same + length, ai + same, ai + same + length) === 0) {
      same += length;
      step *= 2;
      continue;
    }
    let differ = same + length;
    while (differ - same > 32) {
      const middle = (same + differ) >>> 1;
      if (a.compare(b, bi + same, bi + middle, ai + same, ai + middle) === 0) same = middle;
      else differ = middle;
    }
    while (same < differ && a[ai + same] === b[bi + same]) same += 1;
    return same;
  }
  return same;
}
