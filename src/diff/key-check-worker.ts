import { parentPort, workerData } from 'node:worker_threads';
import { checkKeys, type KeyCheck } from './key-check.js';
import { Unsuitable } from './old-rows.js';

/** Checks the aligned scan's keys on its own thread (see checkKeysAside in aligned-scan.ts). */
export type KeyCheckReply = { ok: true } | { unsuitable: string } | { failed: string };

try {
  checkKeys(workerData as KeyCheck);
  parentPort!.postMessage({ ok: true } satisfies KeyCheckReply);
} catch (error) {
  const reply: KeyCheckReply = error instanceof Unsuitable ? { unsuitable: error.message } : { failed: (error as Error).stack ?? String(error) };
  parentPort!.postMessage(reply);
}
