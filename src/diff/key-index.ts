/**
 * The old file's rows by key hash (two 32-bit hashes per key), for the aligned scan. One open-addressed
 * table over ten million keys is hundreds of megabytes, and every insert and lookup then misses the
 * processor's caches (0.5-0.7 microseconds each on the bench machine). So the keys are first sorted
 * into buckets by the top bits of their first hash, in sequential passes, and each bucket gets a small
 * table of its own that stays in cache while it is filled.
 */
export class KeyIndex {
  private constructor(
    private readonly shift: number,
    /** Per bucket: where its slots start, and its slot count less one. */
    private readonly starts: Int32Array,
    private readonly masks: Int32Array,
    /** Per slot: first hash, second hash, row + 1 (0: free). */
    private readonly slots: Int32Array,
  ) {}

  /**
   * Index the keys of consecutive stretches of rows (rows numbered through all of them), or null when
   * two keys have both hashes equal: a repeated key, almost surely, which the engine then names.
   */
  static build(stretches: ReadonlyArray<{ rows: number; first: Int32Array; second: Int32Array }>): KeyIndex | null {
    const rows = stretches.reduce((sum, s) => sum + s.rows, 0);
    // About 10,000 keys a bucket: its table (some 200 KB) stays in cache while it is filled, and the
    // scatter into buckets writes to few enough places at once to stay fast too (10,000,000 keys:
    // 1.1 s, against 1.5 s with 512 keys a bucket).
    let bits = 4;
    while (bits < 20 && rows >> bits > 16384) bits += 1;
    const shift = 32 - bits;
    const buckets = 1 << bits;
    const counts = new Int32Array(buckets);
    for (const { rows: n, first } of stretches) for (let i = 0; i < n; i += 1) counts[first[i] >>> shift] += 1;
    // Counting sort of (first, second, row) by bucket.
    const begin = new Int32Array(buckets + 1);
    for (let b = 0; b < buckets; b += 1) begin[b + 1] = begin[b] + counts[b];
    const next = begin.slice(0, buckets);
    const sorted = new Int32Array(rows * 3);
    let base = 0;
    for (const { rows: n, first, second } of stretches) {
      for (let i = 0; i < n; i += 1) {
        const at = next[first[i] >>> shift]++ * 3;
        sorted[at] = first[i];
        sorted[at + 1] = second[i];
        sorted[at + 2] = base + i + 1;
      }
      base += n;
    }
    const starts = new Int32Array(buckets);
    const masks = new Int32Array(buckets);
    let total = 0;
    for (let b = 0; b < buckets; b += 1) {
      let size = 4;
      while (size * 6 < counts[b] * 10) size *= 2;
      starts[b] = total;
      masks[b] = size - 1;
      total += size;
    }
    const slots = new Int32Array(total * 3);
    for (let b = 0; b < buckets; b += 1) {
      const start = starts[b];
      const mask = masks[b];
      for (let at = begin[b] * 3; at < begin[b + 1] * 3; at += 3) {
        const h1 = sorted[at];
        const h2 = sorted[at + 1];
        let slot = h1 & mask;
        while (slots[(start + slot) * 3 + 2] !== 0) {
          if (slots[(start + slot) * 3] === h1 && slots[(start + slot) * 3 + 1] === h2) return null;
          slot = (slot + 1) & mask;
        }
        slots[(start + slot) * 3] = h1;
        slots[(start + slot) * 3 + 1] = h2;
        slots[(start + slot) * 3 + 2] = sorted[at + 2];
      }
    }
    return new KeyIndex(shift, starts, masks, slots);
  }

  /** The row holding this key, or -1. */
  find(h1: number, h2: number): number {
    const bucket = h1 >>> this.shift;
    const start = this.starts[bucket];
    const mask = this.masks[bucket];
    let slot = h1 & mask;
    for (;;) {
      const at = (start + slot) * 3;
      const row = this.slots[at + 2];
      if (row === 0) return -1;
      if (this.slots[at] === h1 && this.slots[at + 1] === h2) return row - 1;
      slot = (slot + 1) & mask;
    }
  }
}
