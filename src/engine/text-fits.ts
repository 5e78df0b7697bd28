import { CsvKernel } from './csv-kernel.js';

/**
 * The type-fit rules of column-types.ts (INTEGER_TEXT, NUMBER_TEXT, DATE_TEXT and their casts) for
 * raw UTF-8 bytes, so a scan outside the engine can count a column's fits without loading it. Where
 * the answer would depend on the engine's casts at their edges (exponents or digit runs in the
 * hundreds, year 0000), the value is UNSURE and the caller must let the engine decide instead.
 * The rules themselves are written into `count` in csv-kernel.wat, which the aligned scan runs over
 * every value; tests/diff/aligned-scan.test.ts checks every answer against the SQL rules.
 */
export const FITS_INTEGER = 1;
export const FITS_NUMBER = 2;
export const FITS_BOOLEAN = 4;
export const FITS_DATE = 8;
export const UNSURE = 16;

let kernel: CsvKernel | undefined;

// One value as a file of one column, counted by the kernel: counts (32 i32s), the row's two key
// hashes, no key column, the bytes that end a field (newline and quote: a value holding a delimiter
// is still one value), then the value.
const HASHES_AT = 4 * 32;
const KEYS_AT = HASHES_AT + 8;
const SPECIAL_AT = KEYS_AT + 1;
const VALUE_AT = SPECIAL_AT + 256;

/** The fits of the non-empty value bytes[start, end): a sum of the FITS_ flags, or UNSURE. */
export function textFits(bytes: Uint8Array, start: number, end: number): number {
  const value = bytes.subarray(start, end);
  // A quote or line break fits no type, and would make the value not one field.
  if (value.includes(QUOTE) || value.includes(NEWLINE)) return 0;
  kernel ??= new CsvKernel();
  const memory = kernel.reserve(VALUE_AT + value.length + 1);
  memory.fill(0, 0, VALUE_AT);
  memory[SPECIAL_AT + NEWLINE] = 1;
  memory[SPECIAL_AT + QUOTE] = 1;
  memory.set(value, VALUE_AT);
  memory[VALUE_AT + value.length] = NEWLINE;
  kernel.count(VALUE_AT, VALUE_AT + value.length + 1, 1, 0, KEYS_AT, SPECIAL_AT, 0, HASHES_AT, HASHES_AT + 4);
  return kernel.int32s(0, 32).findIndex((count) => count === 1);
}

const NEWLINE = 10;
const QUOTE = 34;
