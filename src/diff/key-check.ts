import { unsuitable } from './old-rows.js';

/** The two key hashes of each of some rows or lines. */
export interface KeyHashes {
  rows: number;
  first: Int32Array;
  second: Int32Array;
}

/** What the aligned scan's key check needs: the old rows as counted, and the keys of the written lines. */
export interface KeyCheck {
  /** Consecutive stretches of the old file's rows. */
  stretches: KeyHashes[];
  /** The written old lines. */
  oldKeys: KeyHashes;
  /** The written new lines with a key. */
  newKeys: KeyHashes;
}

/**
 * No key repeats in the old file (nor do two keys share both hashes), so a written old line is the
 * one old row its key hashes name; and every written new line whose key an old row holds has that
 * old row written too: otherwise the old row stood in an identical run, so NEW holds its key twice.
 * Throws Unsuitable, and the engine then diffs the whole files and names the rows.
 *
 * One open-addressed table over ten million keys is hundreds of megabytes, and every insert and
 * lookup then misses the processor's caches (0.5-0.7 microseconds each on the bench machine). So the
 * keys, old and written, are first sorted into buckets by the top bits of their first hash, in
 * sequential passes; then each bucket's old keys go into one small table, used again for every
 * bucket, that stays in cache while the bucket's written keys are looked up in it.
 */
export function checkKeys(check: KeyCheck): void {
  const { stretches, oldKeys, newKeys } = check;
  const rows = stretches.reduce((sum, s) => sum + s.rows, 0);
  // About 10,000 keys a bucket: its table (some 200 KB) stays in cache, and the scatter into
  // buckets writes to few enough places at once to stay fast too.
  let bits = 4;
  while (bits < 20 && rows >> bits > 16384) bits += 1;
  const shift = 32 - bits;
  const old = bucketed(bits, shift, stretches);
  const writtenOld = bucketed(bits, shift, [oldKeys]);
  const writtenNew = bucketed(bits, shift, [newKeys]);
  let largest = 0;
  for (let b = 0; b < 1 << bits; b += 1) largest = Math.max(largest, old.begin[b + 1] - old.begin[b]);
  const capacity = tableSize(largest);
  /** Per slot: first hash, second hash. */
  const slots = new Int32Array(capacity * 2);
  /** Per slot: 0 free, 1 an old key, 2 an old key whose line was written. */
  const state = new Uint8Array(capacity);
  for (let b = 0; b < 1 << bits; b += 1) {
    const mask = tableSize(old.begin[b + 1] - old.begin[b]) - 1;
    state.fill(0, 0, mask + 1);
    for (let at = old.begin[b] * 2; at < old.begin[b + 1] * 2; at += 2) {
      const slot = slotOf(slots, state, mask, old.hashes[at], old.hashes[at + 1]);
      if (state[slot] !== 0) unsuitable('repeated key');
      slots[slot * 2] = old.hashes[at];
      slots[slot * 2 + 1] = old.hashes[at + 1];
      state[slot] = 1;
    }
    for (let at = writtenOld.begin[b] * 2; at < writtenOld.begin[b + 1] * 2; at += 2) {
      const slot = slotOf(slots, state, mask, writtenOld.hashes[at], writtenOld.hashes[at + 1]);
      if (state[slot] === 0) unsuitable('old line not found by its key');
      state[slot] = 2;
    }
    for (let at = writtenNew.begin[b] * 2; at < writtenNew.begin[b + 1] * 2; at += 2) {
      if (state[slotOf(slots, state, mask, writtenNew.hashes[at], writtenNew.hashes[at + 1])] === 1) unsuitable('a key of the new file is repeated');
    }
  }
}

/** The slot holding this key, or the free slot where it would go. */
function slotOf(slots: Int32Array, state: Uint8Array, mask: number, h1: number, h2: number): number {
  let slot = h1 & mask;
  while (state[slot] !== 0 && (slots[slot * 2] !== h1 || slots[slot * 2 + 1] !== h2)) slot = (slot + 1) & mask;
  return slot;
}

/** Slots for a bucket of `keys`: a power of two, at most 60 % full. */
function tableSize(keys: number): number {
  let size = 4;
  while (size * 6 < keys * 10) size *= 2;
  return size;
}

/** The keys' hash pairs, sorted by bucket (a counting sort): bucket b's are hashes[begin[b] * 2, begin[b + 1] * 2). */
function bucketed(bits: number, shift: number, stretches: readonly KeyHashes[]): { begin: Int32Array; hashes: Int32Array } {
  const buckets = 1 << bits;
  const begin = new Int32Array(buckets + 1);
  for (const { rows, first } of stretches) for (let i = 0; i < rows; i += 1) begin[(first[i] >>> shift) + 1] += 1;
  for (let b = 0; b < buckets; b += 1) begin[b + 1] += begin[b];
  const next = begin.slice(0, buckets);
  const hashes = new Int32Array(begin[buckets] * 2);
  for (const { rows, first, second } of stretches) {
    for (let i = 0; i < rows; i += 1) {
      const at = next[first[i] >>> shift]++ * 2;
      hashes[at] = first[i];
      hashes[at + 1] = second[i];
    }
  }
  return { begin, hashes };
}
