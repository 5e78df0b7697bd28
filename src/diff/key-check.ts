import { KeyIndex } from './key-index.js';
import { unsuitable } from './old-rows.js';

/** What the aligned scan's key check needs: the old rows as counted, and the keys of the written lines. */
export interface KeyCheck {
  /** Consecutive stretches of the old file's rows: each row's key hashes. */
  stretches: Array<{ rows: number; first: Int32Array; second: Int32Array }>;
  /** Per written old line: its key's two hashes. */
  oldKeys: Float64Array;
  /** Per written new line with a key: its key's two hashes. */
  newKeys: Float64Array;
}

/**
 * No key repeats in the old file (nor do two keys share both hashes), so a written old line is the
 * one old row its key hashes name; and every written new line whose key an old row holds has that
 * old row written too: otherwise the old row stood in an identical run, so NEW holds its key twice.
 * Throws Unsuitable, and the engine then diffs the whole files and names the rows.
 */
export function checkKeys(check: KeyCheck): void {
  const { stretches } = check;
  const index = KeyIndex.build(stretches) ?? unsuitable('repeated key');
  const rows = stretches.reduce((sum, s) => sum + s.rows, 0);
  const written = new Uint8Array(rows);
  const { oldKeys, newKeys } = check;
  for (let i = 0; i < oldKeys.length; i += 2) {
    const row = index.find(oldKeys[i], oldKeys[i + 1]);
    if (row < 0) unsuitable('old line not found by its key');
    written[row] = 1;
  }
  for (let i = 0; i < newKeys.length; i += 2) {
    const row = index.find(newKeys[i], newKeys[i + 1]);
    if (row >= 0 && written[row] === 0) unsuitable('a key of the new file is repeated');
  }
}
