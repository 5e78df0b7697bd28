/**
 * The type-fit rules of column-types.ts (INTEGER_TEXT, NUMBER_TEXT, DATE_TEXT and their casts) for
 * raw UTF-8 bytes, so a scan outside the engine can count a column's fits without loading it. Where
 * the answer would depend on the engine's casts at their edges (exponents or digit runs in the
 * hundreds, year 0000), the value is UNSURE and the caller must let the engine decide instead.
 * tests/engine/text-fits.test.ts checks every answer against the SQL rules.
 */
export const FITS_INTEGER = 1;
export const FITS_NUMBER = 2;
export const FITS_BOOLEAN = 4;
export const FITS_DATE = 8;
export const UNSURE = 16;

const ZERO = 48;
const NINE = 57;
const MINUS = 45;
const PLUS = 43;
const DOT = 46;

/**
 * Within these, a number is far inside DOUBLE's range (about 1e308); beyond them, whether the cast
 * succeeds is the engine's to say.
 */
const SAFE_DIGITS = 300;
const SAFE_EXPONENT = 250;
const SAFE_DIGITS_WITH_EXPONENT = 40;

/** The fits of the non-empty value bytes[start, end): a sum of the FITS_ flags, or UNSURE. */
export function textFits(bytes: Uint8Array, start: number, end: number): number {
  let i = start;
  let ch = bytes[i];
  if (ch === MINUS) {
    i += 1;
    if (i === end) return 0;
    ch = bytes[i];
  }
  if (ch >= ZERO && ch <= NINE) return numberOrDateFits(bytes, start, i, end);
  const length = end - start;
  if ((length === 4 || length === 5) && ((ch | 32) === 116 || (ch | 32) === 102)) return booleanFits(bytes, start, end);
  return 0;
}

function numberOrDateFits(bytes: Uint8Array, start: number, digitsStart: number, end: number): number {
  let i = digitsStart;
  while (i < end && bytes[i] >= ZERO && bytes[i] <= NINE) i += 1;
  const digits = i - digitsStart;
  if (i === end) {
    if (digits > 1 && bytes[digitsStart] === ZERO) return 0; // "007" is a code
    if (digits > SAFE_DIGITS) return UNSURE;
    return digits <= 18 ? FITS_INTEGER | FITS_NUMBER : FITS_NUMBER;
  }
  if (bytes[i] === MINUS) return digitsStart === start && digits === 4 ? dateFits(bytes, start, end) : 0;
  if (digits > 1 && bytes[digitsStart] === ZERO) return 0;
  let allDigits = digits;
  if (bytes[i] === DOT) {
    i += 1;
    const fraction = i;
    while (i < end && bytes[i] >= ZERO && bytes[i] <= NINE) i += 1;
    if (i === fraction) return 0;
    allDigits += i - fraction;
  }
  if (i < end && (bytes[i] | 32) === 101) {
    i += 1;
    if (i < end && (bytes[i] === PLUS || bytes[i] === MINUS)) i += 1;
    const exponent = i;
    while (i < end && bytes[i] >= ZERO && bytes[i] <= NINE) i += 1;
    if (i === exponent || i !== end) return 0;
    // Leading zeros aside, a short exponent cannot take a double out of range.
    let value = 0;
    for (let e = exponent; e < end && value <= SAFE_EXPONENT; e += 1) value = value * 10 + bytes[e] - ZERO;
    if (value > SAFE_EXPONENT || allDigits > SAFE_DIGITS_WITH_EXPONENT) return UNSURE;
  }
  if (i !== end) return 0;
  return allDigits > SAFE_DIGITS ? UNSURE : FITS_NUMBER;
}

const DAYS_IN_MONTH = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31];

/** YYYY-MM-DD of a real day of the proleptic Gregorian calendar (the engine's DATE). */
function dateFits(bytes: Uint8Array, start: number, end: number): number {
  if (end - start !== 10 || bytes[start + 7] !== MINUS) return 0;
  // Written out, not looped over a list of places: this runs for every date in a file.
  const m1 = bytes[start + 5] - ZERO;
  const m2 = bytes[start + 6] - ZERO;
  const d1 = bytes[start + 8] - ZERO;
  const d2 = bytes[start + 9] - ZERO;
  if (m1 < 0 || m1 > 9 || m2 < 0 || m2 > 9 || d1 < 0 || d1 > 9 || d2 < 0 || d2 > 9) return 0;
  const year = (bytes[start] - ZERO) * 1000 + (bytes[start + 1] - ZERO) * 100 + (bytes[start + 2] - ZERO) * 10 + (bytes[start + 3] - ZERO);
  const month = m1 * 10 + m2;
  const day = d1 * 10 + d2;
  if (year === 0) return UNSURE; // read as 1 BC
  if (month < 1 || month > 12 || day < 1) return 0;
  const leap = year % 4 === 0 && (year % 100 !== 0 || year % 400 === 0);
  const days = month === 2 && leap ? 29 : DAYS_IN_MONTH[month - 1];
  return day <= days ? FITS_DATE : 0;
}

const TRUE = [116, 114, 117, 101];
const FALSE = [102, 97, 108, 115, 101];

/** "true" or "false" in any ASCII case (lower() of anything else gives neither). */
function booleanFits(bytes: Uint8Array, start: number, end: number): number {
  const word = end - start === 4 ? TRUE : FALSE;
  for (let i = 0; i < word.length; i += 1) if ((bytes[start + i] | 32) !== word[i]) return 0;
  return FITS_BOOLEAN;
}
