import { existsSync, readdirSync, rmSync } from 'node:fs';
import path from 'node:path';

/** Whether a process with this id is running on this machine (one we may not signal counts as running). */
export function processAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (error) {
    return (error as NodeJS.ErrnoException).code === 'EPERM';
  }
}

/**
 * Remove what killed runs left in `dir`: each entry whose name `pattern` matches, its first group
 * being the id of the process that made it, when that process is gone (nothing will finish it).
 */
export function removeAbandoned(dir: string, pattern: RegExp): void {
  if (!existsSync(dir)) return;
  for (const name of readdirSync(dir)) {
    const pid = Number(pattern.exec(name)?.[1]);
    if (!pid || pid === process.pid || processAlive(pid)) continue;
    rmSync(path.join(dir, name), { recursive: true, force: true });
  }
}
