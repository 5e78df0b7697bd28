import { CsvKernel } from './csv-kernel.js';

/**
 * The type-fit rules of column-types.ts (INTEGER_TEXT, NUMBER_TEXT, DATE_TEXT and their casts) for
 * raw UTF-8 bytes, so a scan outside the engine can count a column's fits without loading it. Where
 * the answer would depend on the engine's casts at their edges (exponents or digit runs in the
 * hundreds, year 0000), the value is UNSURE and the caller must let the engine decide instead.
 * The rules themselves are `fits` in csv-kernel.wat, which the aligned scan runs over every value;
 * tests/diff/aligned-scan.test.ts checks every answer against the SQL rules.
 */
export const FITS_INTEGER = 1;
export const FITS_NUMBER = 2;
export const FITS_BOOLEAN = 4;
export const FITS_DATE = 8;
export const UNSURE = 16;

let kernel: CsvKernel | undefined;

/** The fits of the non-empty value bytes[start, end): a sum of the FITS_ flags, or UNSURE. */
export function textFits(bytes: Uint8Array, start: number, end: number): number {
  kernel ??= new CsvKernel();
  kernel.reserve(end - start).set(bytes.subarray(start, end), 0);
  return kernel.fits(0, end - start);
}
