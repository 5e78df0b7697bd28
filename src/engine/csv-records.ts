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
 * its row count with this one. The walk (see walkLines) costs little beside the engine's read, which
 * it runs alongside: it only waits on the disk between blocks.
 */
export async function scanDelimited(file: string, delimiter: string, width: number): Promise<DelimitedScan> {
  let records = 0;
  let holdsNulByte = false;
  await walkLines(file, delimiter, {
    block: (bytes) => {
      if (!holdsNulByte && bytes.includes(0)) holdsNulByte = true;
    },
    line: (_start, blank) => {
      if (!blank || width === 1) records += 1;
      return false;
    },
  });
  return { records, holdsNulByte };
}

/**
 * The file line on which a delimited file's `n`-th unit starts (1-based; the header is unit 1), where
 * units are its records and, with `blankLinesCount`, its blank lines too: DuckDB's CSV messages number
 * lines that way, so a line break inside quotes puts them behind the file's own line numbers. Only for
 * messages about a refused file. Null past the last unit.
 */
export async function fileLineOfUnit(file: string, delimiter: string, width: number, n: number, blankLinesCount: boolean): Promise<number | null> {
  let units = 0;
  let found: number | null = null;
  await walkLines(file, delimiter, {
    line: (start, blank) => {
      if (blank && width !== 1 && !blankLinesCount) return false;
      units += 1;
      if (units === n) found = start;
      return found !== null;
    },
  });
  return found === null ? null : 1 + (await lineBreaksBefore(file, found));
}

/**
 * Walk a delimited file's lines as the engine's reader splits them, in 4 MiB blocks: `line` hears
 * where each starts (bytes from the start of the file) and whether it is blank, and stops the walk by
 * returning true; `block` sees every block. The rules are the reader's, as the loader calls it: double
 * quotes open a quoted field only at the start of a field and are doubled inside one, where line
 * breaks belong to the field; elsewhere a quote is an ordinary character. A line holding nothing but
 * carriage returns is blank; a last line without a line break counts. The walk hops from quote to
 * quote and line break to line break (Buffer.indexOf), not byte by byte.
 */
async function walkLines(
  file: string,
  delimiter: string,
  visit: { line: (start: number, blank: boolean) => boolean; block?: (bytes: Buffer) => void },
): Promise<void> {
  const separator = delimiter.charCodeAt(0);
  const handle = await open(file, 'r');
  const block = Buffer.allocUnsafe(BLOCK_BYTES);
  let quoted = false;
  /** In a quoted field, the block ended on a quote: the next byte says whether it closed the field. */
  let quoteAtEnd = false;
  /** The byte before the block, or -1 at the start of the file. */
  let previous = -1;
  /** Where the current line starts, in bytes from the start of the file. */
  let lineStart = 0;
  /** Whether the current line has a byte other than a carriage return. */
  let lineHasText = false;
  let offset = 0;
  try {
    for (;;) {
      const { bytesRead: size } = await handle.read(block, 0, BLOCK_BYTES, null);
      if (size === 0) break;
      const bytes = block.subarray(0, size);
      visit.block?.(bytes);
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
          lineHasText = true;
          i = q + 1;
          continue;
        }
        if (lf === -1) {
          if (!lineHasText && hasText(bytes, i, size)) lineHasText = true;
          break;
        }
        if (!lineHasText && hasText(bytes, i, lf)) lineHasText = true;
        if (visit.line(lineStart, !lineHasText)) return;
        lineStart = offset + lf + 1;
        lineHasText = false;
        i = lf + 1;
      }
      previous = bytes[size - 1];
      offset += size;
    }
    // A last line without a line break (or one still inside quotes, which the reader refuses anyway).
    if (offset > lineStart && (lineHasText || quoted)) visit.line(lineStart, false);
  } finally {
    await handle.close();
  }
}

/** Whether bytes[from, to) hold anything but carriage returns. */
function hasText(bytes: Buffer, from: number, to: number): boolean {
  for (let i = from; i < to; i += 1) if (bytes[i] !== CR) return true;
  return false;
}

/** How many line breaks the file holds before byte `end`, quoted or not. */
async function lineBreaksBefore(file: string, end: number): Promise<number> {
  const handle = await open(file, 'r');
  const block = Buffer.allocUnsafe(BLOCK_BYTES);
  let count = 0;
  try {
    for (let offset = 0; offset < end; ) {
      const { bytesRead } = await handle.read(block, 0, Math.min(BLOCK_BYTES, end - offset), offset);
      if (bytesRead === 0) break;
      const bytes = block.subarray(0, bytesRead);
      for (let at = bytes.indexOf(LF); at !== -1; at = bytes.indexOf(LF, at + 1)) count += 1;
      offset += bytesRead;
    }
  } finally {
    await handle.close();
  }
  return count;
}
