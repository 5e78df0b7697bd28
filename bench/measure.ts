import { spawn } from 'node:child_process';
import { existsSync, readFileSync, rmSync } from 'node:fs';
import path from 'node:path';
import { performance } from 'node:perf_hooks';

/** GNU time, which reports a command's peak memory and CPU time; polling /proc is the fallback. */
const TIME = '/usr/bin/time';

export interface Run {
  ms: number;
  code: number | null;
  timedOut: boolean;
  /** Maximum resident set size of the command (bytes), or null when it could not be measured. */
  peakRss: number | null;
  rssSource: string;
  /** User plus system CPU seconds of the command (less disturbed by other load than wall time), or null. */
  cpuS: number | null;
  stdout: string;
  stderr: string;
}

/** Process groups of the commands running now, ended if the benchmark itself is interrupted. */
const running = new Set<number>();
for (const signal of ['SIGINT', 'SIGTERM'] as const) {
  process.on(signal, () => {
    for (const pid of running) {
      try {
        process.kill(-pid, 'SIGKILL');
      } catch {
        /* already gone */
      }
    }
    process.exit(130);
  });
}

/**
 * Run a command in its own process group, under /usr/bin/time -v when present (the report goes to a
 * file, so the command's stderr stays its own), else polling VmHWM in /proc. On timeout the whole
 * group is killed.
 */
export function runMeasured(command: string, args: string[], options: { cwd: string; reportDir: string; timeoutMs?: number }): Promise<Run> {
  const useTime = existsSync(TIME);
  const report = path.join(options.reportDir, `time-${process.pid}-${Date.now()}.txt`);
  const [cmd, argv] = useTime ? [TIME, ['-v', '-o', report, command, ...args]] : [command, args];
  return new Promise((resolve, reject) => {
    const started = performance.now();
    const child = spawn(cmd, argv, { cwd: options.cwd, env: { ...process.env, NO_COLOR: '1' }, stdio: ['ignore', 'pipe', 'pipe'], detached: true });
    if (child.pid) running.add(child.pid);
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (d) => {
      if (stdout.length < 1 << 20) stdout += d;
    });
    child.stderr.on('data', (d) => {
      if (stderr.length < 1 << 20) stderr += d;
    });
    let polledPeak = 0;
    const poll = useTime
      ? null
      : setInterval(() => {
          try {
            const kb = Number(/VmHWM:\s+(\d+) kB/.exec(readFileSync(`/proc/${child.pid}/status`, 'utf8'))?.[1] ?? 0);
            polledPeak = Math.max(polledPeak, kb * 1024);
          } catch {
            /* exited */
          }
        }, 20);
    let timedOut = false;
    const timer = options.timeoutMs
      ? setTimeout(() => {
          timedOut = true;
          try {
            process.kill(-child.pid!, 'SIGKILL');
          } catch {
            /* already gone */
          }
        }, options.timeoutMs)
      : null;
    child.on('error', reject);
    child.on('close', (code) => {
      const ms = performance.now() - started;
      if (child.pid) running.delete(child.pid);
      if (poll) clearInterval(poll);
      if (timer) clearTimeout(timer);
      let peakRss: number | null = polledPeak || null;
      let cpuS: number | null = null;
      if (useTime && existsSync(report)) {
        const text = readFileSync(report, 'utf8');
        rmSync(report, { force: true });
        const kb = Number(/Maximum resident set size \(kbytes\): (\d+)/.exec(text)?.[1] ?? NaN);
        peakRss = Number.isFinite(kb) && !timedOut ? kb * 1024 : null;
        const user = Number(/User time \(seconds\): ([\d.]+)/.exec(text)?.[1] ?? NaN);
        const system = Number(/System time \(seconds\): ([\d.]+)/.exec(text)?.[1] ?? NaN);
        cpuS = Number.isFinite(user + system) && !timedOut ? user + system : null;
        const exit = /Exit status: (\d+)/.exec(text);
        if (exit && code === 0) code = Number(exit[1]);
      }
      resolve({ ms, code, timedOut, peakRss, rssSource: useTime ? '/usr/bin/time -v' : '/proc VmHWM polling', cpuS, stdout, stderr });
    });
  });
}


/** Progress lines go to stderr, so that stdout holds only the figures. */
export const log = (line: string) => process.stderr.write(`${line}\n`);

export const median = (values: number[]) => {
  const sorted = [...values].sort((a, b) => a - b);
  const mid = Math.floor(sorted.length / 2);
  return sorted.length % 2 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
};

/** A positive whole number from an option's text; `_` and `,` may group digits (1_000_000). */
export function positiveWhole(text: string, option: string): number {
  const n = Number(text.replaceAll('_', '').replaceAll(',', ''));
  if (!Number.isInteger(n) || n < 1) throw new Error(`${option} must be a positive whole number`);
  return n;
}

/**
 * A benchmark's options when all are whole numbers: `--name N` or `--name=N` for each key of
 * `defaults` (e.g. { rows: 1_000_000, seed: 20260115, runs: 1 }).
 */
export function parseWholeOptions<T extends Record<string, number>>(argv: string[], defaults: T): T {
  const args: Record<string, number> = { ...defaults };
  const known = Object.keys(defaults).map((name) => `--${name} N`).join(', ');
  for (let i = 0; i < argv.length; i += 1) {
    const [flag, inline] = argv[i].split('=', 2);
    const name = flag.replace(/^--/, '');
    if (!flag.startsWith('--') || !(name in defaults)) throw new Error(`unknown option ${argv[i]} (known: ${known})`);
    args[name] = positiveWhole(inline ?? argv[++i] ?? '', flag);
  }
  return args as T;
}
