import { createReadStream } from 'node:fs';
import { createInterface } from 'node:readline';

export interface JsonLineProblem {
  /** 1-based line of the file. */
  line: number;
  what: string;
}

/**
 * The first line, at most `lastLine`, that does not hold one whole JSON value. Used only to explain a
 * file the engine refused: its JSON reader lets a value run on over several lines, so it names the
 * line where it gave up, which for an object left open is the line after the one to fix.
 */
export async function firstBadJsonLine(file: string, lastLine = Number.POSITIVE_INFINITY): Promise<JsonLineProblem | null> {
  for await (const { line, text } of nonBlankLines(file)) {
    if (line > lastLine) break;
    try {
      JSON.parse(text);
    } catch (error) {
      return { line, what: `line ${line} is not one whole JSON value (${(error as Error).message})` };
    }
  }
  return null;
}

/**
 * The file line of JSON lines record `record` (1-based), for messages: the engine numbers the values
 * it read, and skips blank lines, which the file's line numbers count.
 */
export async function lineOfRecord(file: string, record: number): Promise<number> {
  let seen = 0;
  for await (const { line } of nonBlankLines(file)) {
    seen += 1;
    if (seen === record) return line;
  }
  return record;
}

/** The file's lines that hold more than white space, with their 1-based line numbers. */
async function* nonBlankLines(file: string): AsyncGenerator<{ line: number; text: string }> {
  const lines = createInterface({ input: createReadStream(file, { encoding: 'utf8' }), crlfDelay: Number.POSITIVE_INFINITY });
  let line = 0;
  try {
    for await (const text of lines) {
      line += 1;
      if (text.trim() !== '') yield { line, text };
    }
  } finally {
    lines.close();
  }
}
