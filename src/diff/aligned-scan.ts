import { closeSync, existsSync, openSync, readSync, statSync, writeSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import type { TypeFits } from '../engine/column-types.js';
import { CsvKernel } from '../engine/csv-kernel.js';
import { FITS_BOOLEAN, FITS_DATE, FITS_INTEGER, FITS_NUMBER, UNSURE } from '../engine/text-fits.js';
import { LineWindow, NEWLINE } from './line-window.js';
import { checkKeys, type KeyCheck, type KeyHashes } from './key-check.js';
import { CARRIAGE_RETURN, FIT_COMBINATIONS, QUOTE, Unsuitable, averageLine, countStretch, keyHashes, unsuitable, type RowStretch, type StretchRows } from './old-rows.js';
import { startWorker } from './worker-thread.js';

/**
 * A keyed diff of two delimited files mostly reads rows that did not change: a new delivery repeats
 * most of the old one, in much the same order. This scan streams both files once, side by side,
 * skipping every run of identical lines at memory-compare speed, and writes only the lines that
 * differ to two small files (OLD part and NEW part) for the engine's keyed diff to compare. On the
 * way it counts the old file's type fits over every row and checks its keys, which the engine would
 * otherwise need the whole old file loaded for.
 *
 * The scan takes only files it can read exactly as the engine would: the same header on both sides,
 * and an old file in valid UTF-8 without NUL bytes whose rows are each one line (a quoted field may
 * not hold a line break), as wide as the header, with a key, and ending as the header does (LF or
 * CR LF). Anything else (and rows so far out of order that most lines differ) makes it step aside,
 * saying why, and the engine diffs the whole files as before; so does any problem the engine finds in
 * the parts, and a part whose lines the engine reads as fewer rows (a quoted line break in the new
 * file), so that messages name the real file and line.
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
      /** Lines in each part (without its header): the rows the engine must find in it. */
      oldPartLines: number;
      newPartLines: number;
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
  /**
   * The most old rows the scan takes on (default: as many as fit SCAN_MEMORY); beyond, the engine's
   * whole-file diff, which spills to disk, is the one whose memory stays bounded.
   */
  maxRows?: number;
  /**
   * Work to start while worker threads finish counting the old file: called once the walk has
   * written the parts, with the number of lines in each (the parts may still be found unsuitable).
   */
  meanwhile?: (walked: { oldLines: number; newLines: number }) => Promise<unknown>;
  /**
   * Work on the parts to do while the keys are checked (on a worker thread for a long file): called
   * once the old file is counted, with the scan's answer as it stands. The scan waits for it, and
   * steps aside all the same if the keys fail the check, so its outcome counts only when the scan
   * answers `aligned`.
   */
  whileKeysChecked?: (aligned: Extract<AlignedScan, { kind: 'aligned' }>) => Promise<unknown>;
  /** How far the scan is: counting the old file, then comparing the two, each from 0 to 1. */
  onProgress?: (step: 'count' | 'compare', share: number) => void;
}

/** Bytes kept in view past each cursor. */
const WINDOW = 4 << 20;
/** How far on in NEW the walk looks for an old line, to tell an added line from a removed one. */
const LOOKAHEAD_BYTES = 8 << 10;
/** Past this share of differing bytes the files are too far apart for the scan to pay. */
const MOST_DIFFER = 0.3;

/** Scan OLD and NEW (see above). */
export async function scanAligned(oldFile: string, newFile: string, options: AlignedScanOptions): Promise<AlignedScan> {
  const delimiter = Buffer.from(options.delimiter, 'utf8');
  if (delimiter.length !== 1 || delimiter[0] === QUOTE || delimiter[0] === NEWLINE) return { kind: 'unsuitable', reason: 'delimiter' };
  const keyColumns = options.key.map((k) => options.header.indexOf(k));
  if (keyColumns.some((i) => i < 0)) return { kind: 'unsuitable', reason: 'key column missing' };
  try {
    const window = options.windowBytes ?? WINDOW;
    if (!similarStart(oldFile, newFile, Math.min(window, SAMPLE_BYTES))) unsuitable('the files start with different lines');
    const header = oldHead(oldFile);
    if (header.estimatedRows > (options.maxRows ?? SCAN_MEMORY / MEMORY_PER_ROW)) unsuitable('too many rows for the memory of the scan');
    // A long old file is counted on worker threads while this thread walks both files.
    const counting = countOldFile(oldFile, header, delimiter[0], options.header.length, keyColumns, window, options.onProgress);
    let parts: WalkedParts;
    try {
      parts = alignFiles(oldFile, newFile, header.bytes, delimiter[0], keyColumns, options, window);
      await options.meanwhile?.({ oldLines: parts.oldLines, newLines: parts.newLines });
    } catch (error) {
      counting.stop();
      throw error;
    }
    const old = await counting.result();
    const oldFits = new Map<string, TypeFits>();
    options.header.forEach((name, c) => {
      if (keyColumns.includes(c)) return;
      const at = c * COUNTS;
      const f = old.fits;
      oldFits.set(name, { n: f[at], integer: f[at + 1], number: f[at + 2], boolean: f[at + 3], date: f[at + 4], exactnumber: Number.NaN });
    });
    const aligned: Extract<AlignedScan, { kind: 'aligned' }> = {
      kind: 'aligned',
      oldPart: options.oldPart,
      newPart: options.newPart,
      oldRows: old.rows,
      // Every old line is either in an identical run (and so in NEW too) or in the old part.
      newRows: old.rows - parts.oldLines + parts.newLines,
      oldPartLines: parts.oldLines,
      newPartLines: parts.newLines,
      oldFits,
    };
    const keysChecked = checkKeysAside({ stretches: old.stretches, oldKeys: keyHashesOf(parts.oldKeys), newKeys: keyHashesOf(parts.newKeys) });
    const alongside = options.whileKeysChecked?.(aligned);
    const [keys, work] = await Promise.allSettled([keysChecked, alongside]);
    if (keys.status === 'rejected') throw keys.reason;
    if (work.status === 'rejected') throw work.reason;
    return aligned;
  } catch (error) {
    if (error instanceof Unsuitable) return { kind: 'unsuitable', reason: error.message };
    throw error;
  }
}

/** Per column: non-missing values, then those fitting integer, number, boolean, date. */
const COUNTS = 5;

/**
 * The scan holds a few numbers per old row in memory (its key hashes, twice over while the keys are
 * checked): a 10,000,000-row diff peaks at 0.55-0.6 GB with DuckDB's share. Up to this much, about
 * 16,000,000 rows, the whole diff stays well within the 2 GB the whole-file diff is held to.
 */
const SCAN_MEMORY = 2 ** 30;
const MEMORY_PER_ROW = 64;

/** How much of NEW's start is looked for in twice as much of OLD's before the scan begins. */
const SAMPLE_BYTES = 1 << 20;

/**
 * Whether at least half the lines at the start of NEW are lines near the start of OLD. If not, the
 * rows come in another order, or most of them changed (a recode of a whole column), and the scan
 * would read the old file through only to give up; a second's work on ten million rows.
 */
function similarStart(oldFile: string, newFile: string, bytes: number): boolean {
  const lines = (file: string, size: number) => {
    const window = new LineWindow(file, size + 1);
    try {
      window.header();
      window.fill(size);
      const text = window.buf.toString('latin1', window.pos, Math.min(window.end, window.pos + size));
      return text.split('\n').slice(0, -1);
    } finally {
      window.close();
    }
  };
  const old = new Set(lines(oldFile, 2 * bytes));
  const fresh = lines(newFile, bytes);
  return fresh.filter((line) => old.has(line)).length * 2 >= fresh.length;
}

interface OldFile {
  rows: number;
  fits: Float64Array;
  /** The rows as counted, stretch by stretch, for the key check. */
  stretches: StretchRows[];
}

/**
 * The old file's header line (newline included), where its rows start, their line ending, and how
 * many rows it has, judged by its size and the length of its first lines.
 */
function oldHead(file: string): { bytes: Buffer; start: number; crlf: boolean; estimatedRows: number } {
  const head = new LineWindow(file, 1 << 16);
  try {
    const bytes = head.header() ?? unsuitable('no header');
    const start = head.offset;
    // The header sets the line ending every row must have.
    const crlf = bytes.length > 1 && bytes[bytes.length - 2] === CARRIAGE_RETURN;
    return { bytes, start, crlf, estimatedRows: statSync(file).size / Math.max(1, averageLine(head)) };
  } finally {
    head.close();
  }
}

/**
 * Pass 1: the old file's rows, their keys (which must be present and unique) and type fits. A long file
 * is counted in two stretches at once on two worker threads, started here, while the caller walks the
 * files; `result` waits for them. Where the compiled worker does not exist (the test runner runs the
 * sources) or the file is short, `result` counts it on this thread.
 */
function countOldFile(
  file: string,
  header: { start: number; crlf: boolean },
  delimiter: number,
  width: number,
  keyColumns: number[],
  windowBytes: number,
  onProgress: AlignedScanOptions['onProgress'],
): { result(): Promise<OldFile>; stop(): void } {
  const { start, crlf } = header;
  const size = statSync(file).size;
  const split = size - start > Math.min(SPLIT_BYTES, 4 * windowBytes) ? lineAfter(file, start + Math.floor((size - start) / 2), size) : size;
  const stretch = (from: number, to: number): RowStretch => ({ file, start: from, end: to, delimiter, width, keyColumns, windowBytes, crlf });
  const bounds: Array<[number, number]> = split < size ? [[start, split], [split, size]] : [[start, size]];
  // Each worker's share done; their messages are read while `result` waits.
  const shares = bounds.map(() => 0);
  const reportShare = (i: number) => (share: number) => {
    shares[i] = share;
    onProgress?.('count', shares.reduce((sum, s) => sum + s, 0) / shares.length);
  };
  const workers = split < size && existsSync(fileURLToPath(WORKER)) ? bounds.map(([from, to], i) => startWorker<StretchRows>(WORKER, stretch(from, to), [], reportShare(i))) : null;
  return {
    stop() {
      for (const w of workers ?? []) w.stop();
    },
    async result() {
      let stretches: StretchRows[];
      try {
        stretches = workers
          ? await Promise.all(workers.map((w) => w.result))
          : bounds.map(([from, to], i) => countStretch(stretch(from, to), reportShare(i)));
      } finally {
        for (const w of workers ?? []) w.stop();
      }
      const rows = stretches.reduce((sum, part) => sum + part.rows, 0);
      const combinations = new Float64Array(width * FIT_COMBINATIONS);
      for (const part of stretches) for (let i = 0; i < combinations.length; i += 1) combinations[i] += part.combinations[i];
      return { rows, fits: fitsOf(combinations, width), stretches };
    },
  };
}

/** Files longer than this (or than four windows) are counted in two stretches. */
const SPLIT_BYTES = 8 << 20;
const WORKER = new URL('./old-rows-worker.js', import.meta.url);

/** The offset just after the first newline at or after `from` (or `end` if there is none). */
function lineAfter(file: string, from: number, end: number): number {
  const fd = openSync(file, 'r');
  try {
    const probe = Buffer.allocUnsafe(1 << 20);
    for (let at = from; at < end; at += probe.length) {
      const read = readSync(fd, probe, 0, Math.min(probe.length, end - at), at);
      const newline = probe.subarray(0, read).indexOf(NEWLINE);
      if (newline >= 0) return at + newline + 1;
      if (read === 0) break;
    }
    return end;
  } finally {
    closeSync(fd);
  }
}

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

/** What the walk wrote: lines per part, and the keys of the written lines, to check against pass 1. */
interface WalkedParts {
  oldLines: number;
  newLines: number;
  /** Per written old line: its key's hashes. */
  oldKeys: WrittenKeys;
  /** Per written new line with a key: its key's hashes. */
  newKeys: WrittenKeys;
}

interface WrittenKeys {
  first: number[];
  second: number[];
}

function keyHashesOf(keys: WrittenKeys): KeyHashes {
  return { rows: keys.first.length, first: Int32Array.from(keys.first), second: Int32Array.from(keys.second) };
}

/**
 * Pass 2: walk both files together. Identical runs are skipped. At a line that differs: when both
 * lines have the same key, both are written; otherwise the new line is written to the new part if the
 * old line turns up unchanged a little further on in the new file (the new line was added, or moved
 * here), else the old line to the old part (its row went, changed or moved on). The walk needs nothing
 * from pass 1, so the two run at once; checkKeys (key-check.ts) then holds its lines against the old
 * rows.
 */
function alignFiles(oldFile: string, newFile: string, header: Buffer, delimiter: number, keyColumns: number[], options: AlignedScanOptions, window: number): WalkedParts {
  // Eight windows each: a refill moves the window still unread to the front, one byte in eight read.
  // Both in the kernel's memory, so that it can compare them (sameRun).
  const kernel = new CsvKernel();
  kernel.reserve(window * 16);
  const olds = new LineWindow(oldFile, kernel.buffer(0, window * 8));
  const news = new LineWindow(newFile, kernel.buffer(window * 8, window * 8));
  const lookahead = Math.min(LOOKAHEAD_BYTES, window / 4);
  const oldPart = new LineWriter(options.oldPart, header);
  const newPart = new LineWriter(options.newPart, header);
  const oldKeys: WrittenKeys = { first: [], second: [] };
  const newKeys: WrittenKeys = { first: [], second: [] };
  try {
    olds.header();
    if (!news.header()?.equals(header)) unsuitable('headers differ');
    const writeOld = (stop: number) => {
      const key = keyHashes(olds.buf, olds.pos, stop, delimiter, keyColumns) ?? unsuitable('an old line without its key');
      oldKeys.first.push(key.h1);
      oldKeys.second.push(key.h2);
      oldPart.write(olds.buf, olds.pos, stop + 1);
      olds.pos = stop + 1;
    };
    const writeNew = (stop: number, key: { h1: number; h2: number } | null) => {
      if (key) {
        newKeys.first.push(key.h1);
        newKeys.second.push(key.h2);
      }
      newPart.write(news.buf, news.pos, stop + 1);
      news.pos = stop + 1;
    };
    /** Whether the old line ending at `oldStop` is a line of NEW soon after the one ending at `newStop`. */
    const comesLater = (oldStop: number, newStop: number) => {
      const line = olds.buf.subarray(olds.pos, oldStop + 1);
      const from = newStop + 1;
      const at = news.buf.subarray(from, Math.min(news.end, from + lookahead)).indexOf(line);
      return at === 0 || (at > 0 && news.buf[from + at - 1] === NEWLINE);
    };
    let seen = 0;
    const newSize = Math.max(1, statSync(newFile).size);
    let reported = 0;
    for (;;) {
      const oldLeft = olds.fill(window);
      const newLeft = news.fill(window);
      if (options.onProgress && news.offset - reported > newSize / 100) {
        reported = news.offset;
        options.onProgress('compare', reported / newSize);
      }
      if (oldLeft === 0 && newLeft === 0) break;
      if (newLeft === 0) {
        writeOld(olds.lineEnd());
        continue;
      }
      if (oldLeft === 0) {
        const stop = news.lineEnd();
        writeNew(stop, keyHashes(news.buf, news.pos, stop, delimiter, keyColumns));
        continue;
      }
      const same = sameRun(kernel, olds.buf, olds.pos, news.buf, news.pos, Math.min(oldLeft, newLeft));
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
      const oldKey = keyHashes(olds.buf, olds.pos, oldStop, delimiter, keyColumns);
      const newKey = keyHashes(news.buf, news.pos, newStop, delimiter, keyColumns);
      // Equal hashes of unequal keys (a chance in 2^64) only write two lines more.
      if (newKey && oldKey && newKey.h1 === oldKey.h1 && newKey.h2 === oldKey.h2) {
        writeOld(oldStop);
        writeNew(newStop, newKey);
      } else if (comesLater(oldStop, newStop)) writeNew(newStop, newKey);
      else writeOld(oldStop);
      if (seen > window && oldPart.bytes + newPart.bytes > MOST_DIFFER * 2 * seen) unsuitable('most lines differ');
    }
    return { oldLines: oldPart.lines, newLines: newPart.lines, oldKeys, newKeys };
  } finally {
    olds.close();
    news.close();
    oldPart.close();
    newPart.close();
  }
}

/**
 * checkKeys (key-check.ts) on a worker thread when the old file was long enough to count in two
 * stretches: checking ten million keys takes most of a second, which the engine spends diffing the
 * parts meanwhile. Where the compiled worker does not exist (the test runner), on this thread.
 */
function checkKeysAside(check: KeyCheck): Promise<void> {
  if (check.stretches.length < 2 || !existsSync(fileURLToPath(KEY_WORKER))) return new Promise((resolve) => resolve(checkKeys(check)));
  const buffers = [check.oldKeys, check.newKeys, ...check.stretches].flatMap((keys) => [keys.first.buffer, keys.second.buffer]);
  const worker = startWorker<void>(KEY_WORKER, check, buffers as ArrayBuffer[]);
  return worker.result.finally(worker.stop);
}

const KEY_WORKER = new URL('./key-check-worker.js', import.meta.url);

/**
 * How many bytes from a[ai] and b[bi] are equal (at most `max`): by the kernel while both windows are
 * in its memory (about a tenth of the time of Buffer.compare calls, which cost more to make than to
 * compare a line), else by commonPrefix.
 */
function sameRun(kernel: CsvKernel, a: Buffer, ai: number, b: Buffer, bi: number, max: number): number {
  if (kernel.holds(a) && kernel.holds(b)) return kernel.sameBytes(a.byteOffset + ai, b.byteOffset + bi, max);
  return commonPrefix(a, ai, b, bi, max);
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
