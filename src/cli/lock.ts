import { closeSync, fsyncSync, linkSync, mkdirSync, openSync, readFileSync, renameSync, statSync, unlinkSync, writeSync } from 'node:fs';
import { hostname } from 'node:os';
import path from 'node:path';
import { ErrataError } from '../errors.js';
import { processAlive } from '../process-alive.js';

/**
 * One errata at a time per project. Commands share the cache, the scratch folder and clean/, so two
 * runs at once could stage over each other; each takes `.errata/lock` first. The lock file is created
 * with O_EXCL (only one process can create it) and names its holder: pid, host, command, start time.
 */
export interface LockHolder {
  pid: number;
  host: string;
  command: string;
  started: string;
}

export interface LockOptions {
  /** The command taking the lock, shown to whoever waits for it. */
  command: string;
  /** How long to wait for another run to finish, in milliseconds; default `lockWait()`. */
  waitMs?: number;
  /** Called once when the lock is held by another run and this one starts waiting. */
  onWait?: (holder: LockHolder | null) => void;
  /** When true, a project folder that cannot be written (read-only checkout) is no error: no lock is taken. */
  optional?: boolean;
}

/** A lock older than this is stale whatever its pid says (a host that is gone, a pid reused). */
const STALE_AFTER_MS = 24 * 3_600_000;
/** A lock file still empty after this long was left by a process killed while creating it. */
const HALF_WRITTEN_MS = 10_000;
const POLL_MS = 100;

export function lockFile(root: string): string {
  return path.join(root, '.errata', 'lock');
}

/** How long a run waits for another: ERRATA_LOCK_WAIT in seconds, default 60. */
export function lockWait(): number {
  const fromEnv = Number(process.env.ERRATA_LOCK_WAIT);
  return Number.isFinite(fromEnv) && fromEnv >= 0 && process.env.ERRATA_LOCK_WAIT !== '' ? fromEnv * 1000 : 60_000;
}

/**
 * Take the project's lock, waiting while another live run holds it and taking over a stale one.
 * Resolves to a release function, or null when `optional` and the folder is not writable.
 *
 * @example
 *   const release = await acquireLock(root, { command: 'build' });
 *   try { ... } finally { release?.(); }
 */
export async function acquireLock(root: string, options: LockOptions): Promise<(() => void) | null> {
  const file = lockFile(root);
  const deadline = Date.now() + (options.waitMs ?? lockWait());
  let waited = false;
  for (;;) {
    const outcome = tryCreate(file, options);
    if (outcome === 'created') return () => releaseLock(file);
    if (outcome === 'unwritable') return null;
    const holder = readHolder(file);
    if (isStale(file, holder)) {
      breakStaleLock(file, holder);
      continue;
    }
    if (Date.now() >= deadline) {
      throw new ErrataError('LOCKED', `another errata run is working in this project${holder ? `: ${describeHolder(holder)}` : ''}`, {
        hint: `Wait for it to finish and run again (ERRATA_LOCK_WAIT=SECONDS waits longer). If no errata is running, delete ${path.relative(root, file)}.`,
        data: { file: path.relative(root, file), holder },
      });
    }
    if (!waited) options.onWait?.(holder);
    waited = true;
    await new Promise((resolve) => setTimeout(resolve, POLL_MS));
  }
}

export function describeHolder(holder: LockHolder): string {
  return `errata ${holder.command} (pid ${holder.pid} on ${holder.host}, started ${holder.started})`;
}

function tryCreate(file: string, options: LockOptions): 'created' | 'held' | 'unwritable' {
  let fd: number;
  try {
    mkdirSync(path.dirname(file), { recursive: true });
  } catch (error) {
    if (options.optional) return 'unwritable';
    throw lockFileError(file, error);
  }
  try {
    fd = openSync(file, 'wx');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    if (code === 'EEXIST') return 'held';
    if (options.optional && (code === 'EACCES' || code === 'EROFS' || code === 'EPERM')) return 'unwritable';
    throw lockFileError(file, error);
  }
  try {
    const holder: LockHolder = { pid: process.pid, host: hostname(), command: options.command, started: new Date().toISOString() };
    writeSync(fd, JSON.stringify(holder) + '\n');
    fsyncSync(fd);
  } finally {
    closeSync(fd);
  }
  return 'created';
}

function lockFileError(file: string, error: unknown): ErrataError {
  return new ErrataError('LOCKED', `could not create the lock file ${file}: ${(error as Error).message}`, {
    hint: 'errata needs to write under .errata/ in the project for this command; check the folder permissions.',
    data: { file },
    cause: error,
  });
}

function readHolder(file: string): LockHolder | null {
  try {
    const parsed = JSON.parse(readFileSync(file, 'utf8')) as Partial<LockHolder>;
    if (typeof parsed.pid !== 'number' || typeof parsed.host !== 'string') return null;
    return { pid: parsed.pid, host: parsed.host, command: String(parsed.command ?? '?'), started: String(parsed.started ?? '?') };
  } catch {
    return null;
  }
}

/** Stale: its process is gone from this host, it is older than a day, or it was never finished. */
function isStale(file: string, holder: LockHolder | null): boolean {
  let age: number;
  try {
    age = Date.now() - statSync(file).mtimeMs;
  } catch {
    return false; // released meanwhile: the next attempt will create it
  }
  if (!holder) return age > HALF_WRITTEN_MS;
  if (age > STALE_AFTER_MS) return true;
  return holder.host === hostname() && !processAlive(holder.pid);
}

/**
 * Two runs may find the same stale lock; renaming it aside is atomic, so only one of them takes it
 * away. If what was renamed turns out to be a fresh lock (the other run was quicker), it is put back.
 */
function breakStaleLock(file: string, seen: LockHolder | null): void {
  const aside = `${file}.stale-${process.pid}`;
  try {
    renameSync(file, aside);
  } catch {
    return;
  }
  const moved = readHolder(aside);
  if (JSON.stringify(moved) !== JSON.stringify(seen)) {
    try {
      linkSync(aside, file);
    } catch {
      // a third run holds the lock by now; the one renamed aside is no longer anyone's
    }
  }
  try {
    unlinkSync(aside);
  } catch {
    // already gone
  }
}

function releaseLock(file: string): void {
  const holder = readHolder(file);
  if (holder && holder.pid !== process.pid) return;
  try {
    unlinkSync(file);
  } catch {
    // already gone
  }
}
