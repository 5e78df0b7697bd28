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
