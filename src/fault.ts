/**
 * Fault injection for the crash-safety tests: with ERRATA_FAULT=<point>, the process kills itself
 * (SIGKILL, no clean-up) on reaching that point, as a power cut or an OOM kill would.
 */
export function faultPoint(point: string): void {
  if (process.env.ERRATA_FAULT === point) process.kill(process.pid, 'SIGKILL');
}
