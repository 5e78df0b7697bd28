import { FIT_COMBINATIONS, LineCounter } from './csv-kernel.js';

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

let counter: LineCounter | undefined;

/** The fits of the non-empty value bytes[start, end): a sum of the FITS_ flags, or UNSURE. */
export function textFits(bytes: Uint8Array, start: number, end: number): number {
  const value = bytes.subarray(start, end);
  // A quote or line break fits no type, and would make the value not one field.
  if (value.includes(QUOTE) || value.includes(NEWLINE)) return 0;
  // The value as a file of one column and one line, with no key; a delimiter in it is just a byte.
  counter ??= new LineCounter(1, [], [QUOTE], false);
  const line = Buffer.concat([value, LINE_END]);
  counter.count(line);
  const counts = new Float64Array(FIT_COMBINATIONS);
  counter.takeCounts(counts);
  return counts.indexOf(1);
}

const NEWLINE = 10;
const QUOTE = 34;
const LINE_END = Buffer.from([NEWLINE]);
