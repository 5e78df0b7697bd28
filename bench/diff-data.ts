/**
 * An invented pair of deliveries for the diff benchmark: OLD and NEW, each a CSV of about `rows` rows
 * and 20 columns (a text key, whole numbers, decimals, short codes, dates, some missing values), where
 * NEW differs from OLD by known amounts:
 *
 *   - 1% of OLD's rows are removed and as many new rows (1%) are added, at random places;
 *   - 0.1% of the remaining cells (key excluded) hold a different value, missing values included;
 *   - 0.5% of the rows are moved further down their block of 65,536 rows (a keyed diff must not care).
 *
 * One sequential seeded generator produces both files in a single pass, in large buffered writes, and
 * counts what it planted; the counts are saved beside the files, which are reused while the seed, the
 * row count and the generator version are the same.
 */
import { closeSync, existsSync, mkdirSync, openSync, readFileSync, renameSync, rmSync, statSync, writeFileSync, writeSync } from 'node:fs';
import path from 'node:path';
import { splitmix32 } from './splitmix.js';

/** Bump when the generator changes, so pairs already on disk are regenerated rather than reused. */
const GENERATOR_VERSION = 1;

export const KEY = 'id';

export const COLUMNS = [
  KEY, 'site', 'arm', 'sex', 'enrolled_on', 'visit_date', 'age', 'height_cm', 'weight_kg', 'systolic',
  'diastolic', 'glucose', 'score', 'visits', 'income', 'ratio', 'status', 'region', 'lab', 'flag',
] as const;

const REMOVED_SHARE = 0.01;
const ADDED_SHARE = 0.01;
const CHANGED_CELL_SHARE = 0.001;
const MOVED_SHARE = 0.005;
const BLOCK_ROWS = 65_536;

/** What the generator put into NEW relative to OLD: what a correct keyed diff must report. */
export interface Planted {
  oldRows: number;
  newRows: number;
  added: number;
  removed: number;
  /** Rows present on both sides with at least one changed cell. */
  changedRows: number;
  changedCells: number;
  /** Rows present on both sides and identical. */
  unchangedRows: number;
  /** Rows whose position in NEW was shuffled (informational: order does not matter to a keyed diff). */
  movedRows: number;
}

export interface DiffPair {
  oldFile: string;
  newFile: string;
  oldBytes: number;
  newBytes: number;
  planted: Planted;
  reused: boolean;
  seconds: number;
}

// ---------------------------------------------------------------------------------------------
// Seeded randomness: one splitmix32 stream for the values, another for the edits, both sequential.


// ---------------------------------------------------------------------------------------------
// Values. A cell is held as a number: an index into a list of codes or dates, a whole number, or a
// decimal as a whole number of tenths, hundredths or thousandths; -1 is missing. Distinct numbers are
// distinct values, and each is written the way it prints back (no trailing zeros), so the columns keep
// their numeric type on both sides and a changed cell is a changed value.

type Column =
  | { kind: 'list'; items: readonly string[]; weights?: readonly number[]; missing?: number }
  | { kind: 'int'; lo: number; hi: number; missing?: number }
  | { kind: 'decimal'; lo: number; hi: number; scale: 1 | 2 | 3; missing?: number }
  | { kind: 'date'; lo: number; hi: number; missing?: number };

const FIRST_DAY = Date.UTC(2015, 0, 1) / 86_400_000;
const DAYS = Array.from({ length: 4_000 }, (_, i) => new Date((FIRST_DAY + i) * 86_400_000).toISOString().slice(0, 10));

/** One spec per column after the key, in COLUMNS order. */
const SPECS: Column[] = [
  { kind: 'list', items: Array.from({ length: 40 }, (_, i) => `S${String(i + 1).padStart(2, '0')}`) },
  { kind: 'list', items: ['A', 'B', 'C'] },
  { kind: 'list', items: ['F', 'M', 'X'], weights: [0.49, 0.49, 0.02], missing: 0.02 },
  { kind: 'date', lo: 0, hi: 2_999 },
  { kind: 'date', lo: 500, hi: 3_999, missing: 0.03 },
  { kind: 'int', lo: 18, hi: 95 },
  { kind: 'decimal', lo: 1_400, hi: 2_050, scale: 1 },
  { kind: 'decimal', lo: 400, hi: 1_500, scale: 1, missing: 0.02 },
  { kind: 'int', lo: 90, hi: 190 },
  { kind: 'int', lo: 50, hi: 110 },
  { kind: 'decimal', lo: 300, hi: 1_500, scale: 2, missing: 0.05 },
  { kind: 'int', lo: 0, hi: 100, missing: 0.04 },
  { kind: 'int', lo: 0, hi: 12 },
  { kind: 'int', lo: 10_000, hi: 99_999, missing: 0.06 },
  { kind: 'decimal', lo: 10, hi: 999, scale: 3 },
  { kind: 'list', items: ['ok', 'lost', 'wd', 'dead'], weights: [0.7, 0.15, 0.1, 0.05] },
  { kind: 'list', items: ['north', 'south', 'east', 'west', 'mid'], missing: 0.01 },
  { kind: 'list', items: Array.from({ length: 30 }, (_, i) => `L${i}`), missing: 0.03 },
  { kind: 'list', items: ['y', 'n'] },
];
const VALUE_COLUMNS = SPECS.length;

/**
 * Every text a cell can be written as, in one byte array: token `i` is FLAT[OFFSET[i]..OFFSET[i + 1]).
 * One flat array copies far faster than thousands of small buffers.
 */
const texts: string[] = [];
const intern = (items: readonly string[]) => {
  const base = texts.length;
  texts.push(...items);
  return base;
};
const SMALL = intern(Array.from({ length: 100_000 }, (_, i) => String(i)));
const PAD4 = intern(Array.from({ length: 10_000 }, (_, i) => String(i).padStart(4, '0')));
/** ".5", ".05", ".123"…: the fraction of a decimal by its scale and units, trailing zeros dropped ('' for none). */
const FRACTION = [1, 10, 100, 1000].map((factor, scale) =>
  intern(Array.from({ length: factor }, (_, f) => (f === 0 ? '' : `.${String(f).padStart(scale, '0').replace(/0+$/, '')}`))),
);
const DAY = intern(DAYS);
/** Per column: where the tokens a value indexes start (the whole-number part, for decimals). */
const BASE = Int32Array.from(SPECS, (spec) => (spec.kind === 'list' ? intern(spec.items) : spec.kind === 'date' ? DAY : SMALL));
/** Per column: the decimal factor (1 if not a decimal), and where its fraction tokens start. */
const FACTOR = Int32Array.from(SPECS, (spec) => (spec.kind === 'decimal' ? 10 ** spec.scale : 1));
const FRACTION_BASE = Int32Array.from(SPECS, (spec) => (spec.kind === 'decimal' ? FRACTION[spec.scale] : 0));
const OFFSET = new Int32Array(texts.length + 1);
for (let i = 0; i < texts.length; i += 1) OFFSET[i + 1] = OFFSET[i] + texts[i].length;
const FLAT = Uint8Array.from(Buffer.from(texts.join(''), 'latin1'));

/** Cumulative weights of each list column, when weighted. */
const CUMULATIVE = SPECS.map((spec) => {
  if (spec.kind !== 'list' || !spec.weights) return null;
  let sum = 0;
  return spec.weights.map((w) => (sum += w));
});

function drawValue(r: () => number, c: number): number {
  const spec = SPECS[c];
  if (spec.missing && r() < spec.missing) return -1;
  if (spec.kind === 'list') {
    const cumulative = CUMULATIVE[c];
    if (!cumulative) return Math.floor(r() * spec.items.length);
    const u = r() * cumulative[cumulative.length - 1];
    let i = 0;
    while (i < cumulative.length - 1 && u >= cumulative[i]) i += 1;
    return i;
  }
  return spec.lo + Math.floor(r() * (spec.hi - spec.lo + 1));
}

/** Row keys: a bijection of the row number onto 0..10^8-1, written as R + 8 digits (text, unordered). */
const KEY_SPACE = 100_000_000;
const scrambleKey = (index: number) => (index * 48_271 + 12_345_678) % KEY_SPACE;

/** Cells to skip before the next changed one: geometric with success probability `p`. */
function skip(r: () => number, p: number): number {
  return Math.floor(Math.log(1 - r()) / Math.log(1 - p));
}

// ---------------------------------------------------------------------------------------------
// Writing: rows go straight into large byte buffers, flushed to the file when nearly full.

const COMMA = 0x2c;
const NEWLINE = 0x0a;

class RowWriter {
  private readonly fd: number;
  private readonly buffer = Buffer.allocUnsafe(32 << 20);
  private pos = 0;
  constructor(file: string) {
    this.fd = openSync(file, 'w');
  }

  text(text: string): void {
    this.pos += this.buffer.write(text, this.pos, 'latin1');
  }

  row(index: number, cells: Int32Array): void {
    if (this.pos > this.buffer.length - 4096) this.flush();
    const b = this.buffer;
    let p = this.pos;
    const key = scrambleKey(index);
    b[p++] = 0x52; // R
    p = this.token(PAD4 + Math.floor(key / 10_000), p);
    p = this.token(PAD4 + (key % 10_000), p);
    for (let c = 0; c < VALUE_COLUMNS; c += 1) {
      b[p++] = COMMA;
      const v = cells[c];
      if (v < 0) continue;
      const factor = FACTOR[c];
      if (factor === 1) p = this.token(BASE[c] + v, p);
      else {
        p = this.token(SMALL + Math.floor(v / factor), p);
        p = this.token(FRACTION_BASE[c] + (v % factor), p);
      }
    }
    b[p++] = NEWLINE;
    this.pos = p;
  }

  private token(id: number, p: number): number {
    const b = this.buffer;
    const end = OFFSET[id + 1];
    for (let i = OFFSET[id]; i < end; i += 1) b[p++] = FLAT[i];
    return p;
  }

  flush(): void {
    for (let done = 0; done < this.pos; ) done += writeSync(this.fd, this.buffer, done, this.pos - done);
    this.pos = 0;
  }

  close(): void {
    this.flush();
    closeSync(this.fd);
  }
}

// ---------------------------------------------------------------------------------------------

function generate(oldFile: string, newFile: string, rows: number, seed: number): Planted {
  const values = splitmix32(seed);
  const edits = splitmix32(seed ^ 0x5bd1e995);
  const oldOut = new RowWriter(oldFile);
  const newOut = new RowWriter(newFile);
  const header = COLUMNS.join(',') + '\n';
  oldOut.text(header);
  newOut.text(header);
  const planted: Planted = { oldRows: rows, newRows: 0, added: 0, removed: 0, changedRows: 0, changedCells: 0, unchangedRows: 0, movedRows: 0 };
  const cells = new Int32Array(VALUE_COLUMNS);
  const fill = () => {
    for (let c = 0; c < VALUE_COLUMNS; c += 1) cells[c] = drawValue(values, c);
  };
  /** Rows held back to be written further down their block, by the row they follow. */
  const held = new Map<number, Array<{ index: number; cells: Int32Array }>>();
  const release = (after: number) => {
    const due = held.get(after);
    if (!due) return;
    held.delete(after);
    for (const h of due) newOut.row(h.index, h.cells);
    planted.newRows += due.length;
  };
  let untilChange = skip(edits, CHANGED_CELL_SHARE);
  for (let i = 0; i < rows; i += 1) {
    fill();
    oldOut.row(i, cells);
    if (edits() < REMOVED_SHARE) {
      planted.removed += 1;
    } else {
      let changed = 0;
      while (untilChange < VALUE_COLUMNS) {
        const c = untilChange;
        const before = cells[c];
        let after = before;
        while (after === before) after = before >= 0 && edits() < 0.1 ? -1 : drawValue(edits, c);
        cells[c] = after;
        changed += 1;
        untilChange += 1 + skip(edits, CHANGED_CELL_SHARE);
      }
      untilChange -= VALUE_COLUMNS;
      if (changed) {
        planted.changedRows += 1;
        planted.changedCells += changed;
      } else planted.unchangedRows += 1;
      const blockEnd = (Math.floor(i / BLOCK_ROWS) + 1) * BLOCK_ROWS - 1;
      if (edits() < MOVED_SHARE && i < blockEnd) {
        const at = i + 1 + Math.floor(edits() * (blockEnd - i));
        held.set(at, [...(held.get(at) ?? []), { index: i, cells: cells.slice() }]);
        planted.movedRows += 1;
      } else {
        newOut.row(i, cells);
        planted.newRows += 1;
      }
    }
    if (edits() < ADDED_SHARE) {
      fill();
      newOut.row(rows + planted.added, cells);
      planted.added += 1;
      planted.newRows += 1;
    }
    release(i);
  }
  for (const at of [...held.keys()].sort((a, b) => a - b)) release(at);
  oldOut.close();
  newOut.close();
  return planted;
}

/** The pair for (rows, seed) under `dir`, generated unless a complete one is already there. */
export function ensurePair(dir: string, rows: number, seed: number): DiffPair {
  if (rows * (1 + 2 * ADDED_SHARE) >= KEY_SPACE) throw new Error(`at most ${Math.floor(KEY_SPACE / (1 + 2 * ADDED_SHARE))} rows: keys have 8 digits`);
  mkdirSync(dir, { recursive: true });
  const name = `diff-${rows}-s${seed}`;
  const oldFile = path.join(dir, `${name}-old.csv`);
  const newFile = path.join(dir, `${name}-new.csv`);
  const stamp = path.join(dir, `${name}.json`);
  const fingerprint = { version: GENERATOR_VERSION, rows, seed };
  const result = (planted: Planted, reused: boolean, seconds: number): DiffPair => ({
    oldFile,
    newFile,
    oldBytes: statSync(oldFile).size,
    newBytes: statSync(newFile).size,
    planted,
    reused,
    seconds,
  });
  if (existsSync(stamp) && existsSync(oldFile) && existsSync(newFile)) {
    const saved = JSON.parse(readFileSync(stamp, 'utf8')) as { fingerprint: typeof fingerprint; planted: Planted; oldBytes: number; newBytes: number };
    if (
      JSON.stringify(saved.fingerprint) === JSON.stringify(fingerprint) &&
      saved.oldBytes === statSync(oldFile).size &&
      saved.newBytes === statSync(newFile).size
    ) {
      return result(saved.planted, true, 0);
    }
  }
  rmSync(stamp, { force: true });
  const started = performance.now();
  const tempOld = `${oldFile}.tmp`;
  const tempNew = `${newFile}.tmp`;
  const planted = generate(tempOld, tempNew, rows, seed);
  renameSync(tempOld, oldFile);
  renameSync(tempNew, newFile);
  const pair = result(planted, false, (performance.now() - started) / 1000);
  writeFileSync(stamp, JSON.stringify({ fingerprint, planted, oldBytes: pair.oldBytes, newBytes: pair.newBytes }, null, 2));
  return pair;
}
