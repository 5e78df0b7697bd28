/**
 * Fault injection for the crash-safety tests: with ERRATA_FAULT=<point>, the process kills itself
 * (SIGKILL, no clean-up) on reaching that point, as a power cut or an OOM kill would.
 */
export function faultPoint(point: string): void {
  if (process.env.ERRATA_FAULT === point) process.kill(process.pid, 'SIGKILL');
}

/**
 * With ERRATA_FAULT=pause-<point>, the process waits at that point for ERRATA_FAULT_PAUSE_MS
 * (default 3000) milliseconds, so a test can act while it is there (e.g. while it holds the lock).
 */
export async function faultPause(point: string): Promise<void> {
  if (process.env.ERRATA_FAULT !== `pause-${point}`) return;
  const ms = Number(process.env.ERRATA_FAULT_PAUSE_MS ?? 3000);
  await new Promise((resolve) => setTimeout(resolve, ms));
}
