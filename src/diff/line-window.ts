import { closeSync, openSync, readSync } from 'node:fs';

export const NEWLINE = 10;

/**
 * A stretch of a file, from `start` up to `limit`, read forwards through a buffer that always ends on
 * a whole line. A last line without a newline gets one, so every line ends the same way.
 */
export class LineWindow {
  buf: Buffer;
  /** File offset of buf[0]. */
  base: number;
  pos = 0;
  /** End of the whole lines in the buffer. */
  end = 0;
  private filled = 0;
  private eof = false;
  private readonly fd: number;

  /** `size` is the buffer's length, or a buffer to use until a line longer than it needs a bigger one. */
  constructor(
    file: string,
    size: number | Buffer,
    start = 0,
    private readonly limit = Number.POSITIVE_INFINITY,
  ) {
    this.fd = openSync(file, 'r');
    this.buf = typeof size === 'number' ? Buffer.allocUnsafe(size) : size;
    this.base = start;
  }

  close(): void {
    closeSync(this.fd);
  }

  /** Whole lines from pos: at least `want` bytes of them unless the stretch ends first; 0 at its end. */
  fill(want: number): number {
    while (this.end - this.pos < want && !this.eof) {
      if (this.pos > 0) {
        this.buf.copy(this.buf, 0, this.pos, this.filled);
        this.base += this.pos;
        this.filled -= this.pos;
        this.end -= this.pos;
        this.pos = 0;
      }
      // One byte is kept free for the newline a last line may lack.
      if (this.buf.length - 1 - this.filled < want) {
        const bigger = Buffer.allocUnsafe(Math.max(this.buf.length * 2, want * 2));
        this.buf.copy(bigger, 0, 0, this.filled);
        this.buf = bigger;
      }
      const room = Math.min(this.buf.length - 1 - this.filled, this.limit - (this.base + this.filled));
      const read = room > 0 ? readSync(this.fd, this.buf, this.filled, room, this.base + this.filled) : 0;
      this.filled += read;
      if (read === 0) {
        this.eof = true;
        if (this.filled > this.end && this.buf[this.filled - 1] !== NEWLINE) this.buf[this.filled++] = NEWLINE;
      }
      // (lastIndexOf counts a negative offset from the end of the buffer.)
      this.end = this.filled === 0 ? 0 : this.buf.lastIndexOf(NEWLINE, this.filled - 1) + 1;
    }
    return this.end - this.pos;
  }

  /** The next line's end (its newline) from pos. */
  lineEnd(): number {
    return this.buf.indexOf(NEWLINE, this.pos);
  }

  /** Skip a UTF-8 byte order mark and the header line, returning the header's bytes (newline included). */
  header(): Buffer | null {
    this.fill(1);
    if (this.end >= 3 && this.buf[0] === 0xef && this.buf[1] === 0xbb && this.buf[2] === 0xbf) this.pos = 3;
    if (this.end === this.pos) return null;
    const stop = this.lineEnd();
    const header = Buffer.from(this.buf.subarray(this.pos, stop + 1));
    this.pos = stop + 1;
    return header;
  }

  /** File offset of the cursor. */
  get offset(): number {
    return this.base + this.pos;
  }
}
