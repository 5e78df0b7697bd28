import { spawn } from 'node:child_process';
import { existsSync, readFileSync, utimesSync, writeFileSync } from 'node:fs';
import { hostname } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CLI, errata, makeProject, removeDir, writeFiles } from '../helpers/project.js';

/**
 * Two errata runs in one project at once would stage and publish over each other, so every command
 * that writes takes `.errata/lock`; a second run waits (ERRATA_LOCK_WAIT seconds) and then stops with
 * LOCKED. A lock whose holder is gone is taken over.
 */

const FILES = {
  'errata.yaml': 'tables:\n  t:\n    raw: raw/t/\n    key: id\n',
  'raw/t/delivery.csv': 'id,height\n1,60.5\n2,170.2\n',
};

let root: string;
beforeAll(async () => {
  root = await makeProject(FILES);
});
afterAll(() => removeDir(root));

const lock = () => path.join(root, '.errata', 'lock');

/** A pid that is certainly not running: a child process that has already exited. */
async function deadPid(): Promise<number> {
  const child = spawn(process.execPath, ['-e', '0']);
  await new Promise((resolve) => child.on('exit', resolve));
  return child.pid!;
}

describe('the project lock', () => {
  it('a second run waits for the first, then stops with LOCKED naming the holder', async () => {
    // The first build holds the lock for 2.5 s (a pause at the point right after locking).
    const first = spawn(process.execPath, [CLI, 'build'], {
      cwd: root,
      env: { ...process.env, NO_COLOR: '1', ERRATA_FAULT: 'pause-locked', ERRATA_FAULT_PAUSE_MS: '2500' },
    });
    const firstDone = new Promise<number>((resolve) => first.on('exit', (code) => resolve(code ?? -1)));
    const deadline = Date.now() + 10_000;
    while (!existsSync(lock()) && Date.now() < deadline) await new Promise((r) => setTimeout(r, 50));
    const holder = JSON.parse(readFileSync(lock(), 'utf8'));
    expect(holder).toMatchObject({ pid: first.pid, host: hostname(), command: 'build' });
    expect(Number.isNaN(Date.parse(holder.started))).toBe(false);

    const second = await errata(root, ['build'], { ERRATA_LOCK_WAIT: '0.5' });
    expect(second.code).toBe(2);
    expect(second.stderr).toContain('waiting for errata build');
    expect(second.stderr).toMatch(/error: .*another errata run is working in this project: errata build \(pid \d+/);
    expect(second.stderr).toContain('.errata/lock');

    expect(await firstDone).toBe(0);
    expect(existsSync(lock())).toBe(false);
    expect((await errata(root, ['build'])).code).toBe(0);
  });

  it('a run that waits long enough goes ahead once the first has finished', async () => {
    const first = spawn(process.execPath, [CLI, 'build'], {
      cwd: root,
      env: { ...process.env, NO_COLOR: '1', ERRATA_FAULT: 'pause-locked', ERRATA_FAULT_PAUSE_MS: '1000' },
    });
    const firstDone = new Promise<number>((resolve) => first.on('exit', (code) => resolve(code ?? -1)));
    const deadline = Date.now() + 10_000;
    while (!existsSync(lock()) && Date.now() < deadline) await new Promise((r) => setTimeout(r, 50));
    const second = await errata(root, ['build'], { ERRATA_LOCK_WAIT: '30' });
    expect(second.code, second.stderr).toBe(0);
    expect(second.stderr).toContain('waiting for errata build');
    expect(await firstDone).toBe(0);
  });

  it('a lock left by a process that no longer runs is taken over', async () => {
    writeFiles(root, { '.errata/lock': JSON.stringify({ pid: await deadPid(), host: hostname(), command: 'build', started: '2026-01-01T00:00:00.000Z' }) });
    const result = await errata(root, ['build'], { ERRATA_LOCK_WAIT: '0' });
    expect(result.code).toBe(0);
    expect(existsSync(lock())).toBe(false);
  });

  it('a lock held by a live process on this host is respected', async () => {
    // This test process is alive, so its lock is not stale.
    writeFiles(root, { '.errata/lock': JSON.stringify({ pid: process.pid, host: hostname(), command: 'fix', started: new Date().toISOString() }) });
    try {
      const result = await errata(root, ['build'], { ERRATA_LOCK_WAIT: '0' });
      expect(result.code).toBe(2);
      expect(result.stderr).toContain(`errata fix (pid ${process.pid}`);
      expect(existsSync(lock())).toBe(true);
    } finally {
      removeDir(lock());
    }
  });

  it('a lock older than a day is taken over even when its host is another machine', async () => {
    writeFiles(root, { '.errata/lock': JSON.stringify({ pid: 1, host: 'elsewhere.example', command: 'build', started: '2020-01-01T00:00:00.000Z' }) });
    const old = new Date(Date.now() - 25 * 3_600_000);
    utimesSync(lock(), old, old);
    expect((await errata(root, ['build'], { ERRATA_LOCK_WAIT: '0' })).code).toBe(0);
  });

  it('a half-written lock file (a run killed while creating it) is taken over once it is old', async () => {
    writeFileSync(lock(), '');
    const old = new Date(Date.now() - 60_000);
    utimesSync(lock(), old, old);
    expect((await errata(root, ['build'], { ERRATA_LOCK_WAIT: '0' })).code).toBe(0);
  });
});
