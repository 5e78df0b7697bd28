import { closeSync, openSync, readSync } from 'node:fs';

export interface LineEndingProblem {
  /** 1-based line where the problem is. */
  line: number;
  what: string;
}

/**
 * Find where a delimited file's line endings go wrong: a line ending unlike the first one (CRLF after
 * LF or the reverse) or a carriage return alone, outside quoted fields. Used only to explain a file
 * the CSV reader refused, so it reads the file once, in chunks, and stops at the first problem.
 *
 * @example
 *   lineEndingProblem('/data/visits.csv') // { line: 3, what: 'line 3 ends with CRLF where line 1 ends with LF' }
 */
export function lineEndingProblem(file: string): LineEndingProblem | null {
  const fd = openSync(file, 'r');
  const chunk = Buffer.alloc(1 << 20);
  let first: 'LF' | 'CRLF' | null = null;
  let line = 1;
  let quoted = false;
  let pendingCr = false;
  try {
    for (;;) {
      const length = readSync(fd, chunk, 0, chunk.length, null);
      if (length === 0) break;
      for (let i = 0; i < length; i += 1) {
        const byte = chunk[i];
        if (pendingCr) {
          pendingCr = false;
          if (byte !== 0x0a) return { line, what: `line ${line} holds a carriage return that does not end the line` };
          if (first === 'LF') return { line, what: `line ${line} ends with CRLF where line 1 ends with LF (mixed line endings)` };
          first = 'CRLF';
          line += 1;
          continue;
        }
        if (byte === 0x22) quoted = !quoted;
        else if (quoted) {
          // A line break inside quotes is part of a value, but still a line of the file.
          if (byte === 0x0a) line += 1;
          continue;
        }
        else if (byte === 0x0d) pendingCr = true;
        else if (byte === 0x0a) {
          if (first === 'CRLF') return { line, what: `line ${line} ends with LF where line 1 ends with CRLF (mixed line endings)` };
          first = 'LF';
          line += 1;
        }
      }
    }
  } finally {
    closeSync(fd);
  }
  return pendingCr && first === 'LF' ? { line, what: `line ${line} ends with CR where line 1 ends with LF` } : null;
}
