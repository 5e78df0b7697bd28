import { open } from 'node:fs/promises';

/** What one read of a delimited file outside the engine finds. */
export interface DelimitedScan {
  /** Records, the header among them, as the engine's CSV reader should return them. */
  records: number;
  holdsNulByte: boolean;
}

const LF = 0x0a;
const CR = 0x0d;
const QUOTE = 0x22;
const BLOCK_BYTES = 4 << 20;

/**
 * Count a delimited file's records, and look for a NUL byte, in one read of 4 MiB blocks. The engine's
 * parallel CSV reader was seen to return a file cut short without an error: a line of 7 MB lying
 * across the end of one of its read buffers, followed in the file's last buffer by a row with too many
 * fields, made it drop that row and every row after it (DuckDB 1.5, strict mode). The loader compares
 * its row count with this one.
 *
 * The rules are the reader's, as the loader calls it: double quotes open a quoted field only at the
 * start of a field and are doubled inside one, where line breaks belong to the field; elsewhere a
 * quote is an ordinary character. A blank line is no record, except in a file of one column, where it
 * is a missing value. A last line without a line break is a record. The scan hops from quote to quote
 * and line break to line break (Buffer.indexOf), so it costs little beside the engine's read, which it
 * runs alongside: it only waits on the disk between blocks.
 */
export async function scanDelimited(file: string, delimiter: string, width: number): Promise<DelimitedScan> {
  const separator = delimiter.charCodeAt(0);
  const handle = await open(file, 'r');
  const block = Buffer.allocUnsafe(BLOCK_BYTES);
  let records = 0;
  let holdsNulByte = false;
  let quoted = false;
  /** In a quoted field, the block ended on a quote: the next byte says whether it closed the field. */
  let quoteAtEnd = false;
  /** The byte before the block, or -1 at the start of the file. */
  let previous = -1;
  /** Where the current record starts, in bytes from the start of the file. */
  let recordStart = 0;
  /** Whether the current record has a byte other than a carriage return. */
  let recordHasText = false;
  let offset = 0;
  try {
    for (;;) {
      const { bytesRead: size } = await handle.read(block, 0, BLOCK_BYTES, null);
      if (size === 0) break;
      const bytes = block.subarray(0, size);
      if (!holdsNulByte && bytes.includes(0)) holdsNulByte = true;
      let i = 0;
      if (quoteAtEnd) {
        quoteAtEnd = false;
        if (bytes[0] === QUOTE) i = 1; // a doubled quote: still inside the field
        else quoted = false;
      }
      // The next quote at or after i (-1: none left in the block, -2: not looked up yet), looked up
      // again only once passed: looking for it on every line of a block without quotes would read the
      // rest of the block each time.
      let nextQuote = -2;
      while (i < size) {
        if (quoted) {
          const q = bytes.indexOf(QUOTE, i);
          if (q === -1) break;
          if (q + 1 === size) {
            quoteAtEnd = true;
            break;
          }
          if (bytes[q + 1] === QUOTE) i = q + 2;
          else {
            quoted = false;
            i = q + 1;
          }
          continue;
        }
        const lf = bytes.indexOf(LF, i);
        if (nextQuote === -2 || (nextQuote >= 0 && nextQuote < i)) nextQuote = bytes.indexOf(QUOTE, i);
        const q = nextQuote;
        if (q !== -1 && (lf === -1 || q < lf)) {
          const before = q > 0 ? bytes[q - 1] : previous;
          if (before === separator || before === LF || before === -1) quoted = true;
          recordHasText = true;
          i = q + 1;
          continue;
        }
        if (lf === -1) {
          if (!recordHasText && hasText(bytes, i, size)) recordHasText = true;
          break;
        }
        if (!recordHasText && hasText(bytes, i, lf)) recordHasText = true;
        if (recordHasText || width === 1) records += 1;
        recordStart = offset + lf + 1;
        recordHasText = false;
        i = lf + 1;
      }
      previous = bytes[size - 1];
      offset += size;
    }
  } finally {
    await handle.close();
  }
  // A last line without a line break (or one still inside quotes, which the reader refuses anyway).
  if (offset > recordStart && (recordHasText || quoted)) records += 1;
  return { records, holdsNulByte };
}

/** Whether bytes[from, to) hold anything but carriage returns. */
function hasText(bytes: Buffer, from: number, to: number): boolean {
  for (let i = from; i < to; i += 1) if (bytes[i] !== CR) return true;
  return false;
}

/**
 * The file line on which a delimited file's `n`-th unit starts (1-based; the header is unit 1), where
 * units are its records and, with `blankLinesCount`, its blank lines too: DuckDB's CSV messages number
 * lines that way, so a line break inside quotes puts them behind the file's own line numbers. Only for
 * messages about a refused file: a plain byte loop, about 1 s per 100 MB. Null past the last unit.
 */
export async function fileLineOfUnit(file: string, delimiter: string, width: number, n: number, blankLinesCount: boolean): Promise<number | null> {
  const separator = delimiter.charCodeAt(0);
  const handle = await open(file, 'r');
  const block = Buffer.allocUnsafe(BLOCK_BYTES);
  let line = 1;
  let unitStart = 1;
  let units = 0;
  let quoted = false;
  let quotePending = false;
  let previous = -1;
  let hasText = false;
  try {
    for (;;) {
      const { bytesRead: size } = await handle.read(block, 0, BLOCK_BYTES, null);
      if (size === 0) break;
      for (let i = 0; i < size; i += 1) {
        const byte = block[i];
        if (quotePending) {
          quotePending = false;
          if (byte === QUOTE) {
            previous = byte;
            continue; // a doubled quote
          }
          quoted = false;
        }
        if (quoted) {
          if (byte === QUOTE) quotePending = true;
          else if (byte === LF) line += 1;
        } else if (byte === QUOTE) {
          if (previous === separator || previous === LF || previous === -1) quoted = true;
          hasText = true;
        } else if (byte === LF) {
          if (hasText || width === 1 || blankLinesCount) {
            units += 1;
            if (units === n) return unitStart;
          }
          line += 1;
          unitStart = line;
          hasText = false;
        } else if (byte !== CR) hasText = true;
        previous = byte;
      }
    }
  } finally {
    await handle.close();
  }
  return hasText && units + 1 === n ? unitStart : null;
}
