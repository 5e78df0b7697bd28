import { Chalk, type ChalkInstance } from 'chalk';

/** Where a command writes: results to stdout, progress and warnings to stderr, colour only on a terminal. */
export interface Output {
  out(text: string): void;
  err(text: string): void;
  color: ChalkInstance;
  /** Progress line on a terminal (overwritten in place); silent when not a TTY or --quiet. */
  progress(text: string): void;
  endProgress(): void;
}

export function createOutput(options: { quiet?: boolean } = {}): Output {
  const colorOn = !process.env.NO_COLOR && Boolean(process.stdout.isTTY) && process.env.TERM !== 'dumb';
  const progressOn = !options.quiet && Boolean(process.stderr.isTTY);
  const color = new Chalk({ level: colorOn ? 1 : 0 });
  let shown = false;
  return {
    out: (text) => process.stdout.write(text.endsWith('\n') ? text : `${text}\n`),
    err: (text) => process.stderr.write(text.endsWith('\n') ? text : `${text}\n`),
    color,
    progress(text) {
      if (!progressOn) return;
      process.stderr.write(`\r\x1b[2K${text.slice(0, (process.stderr.columns ?? 80) - 1)}`);
      shown = true;
    },
    endProgress() {
      if (shown) process.stderr.write('\r\x1b[2K');
      shown = false;
    },
  };
}
