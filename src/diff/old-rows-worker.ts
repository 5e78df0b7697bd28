import { parentPort, workerData } from 'node:worker_threads';
import { Unsuitable, countStretch, type RowStretch } from './old-rows.js';

/** Counts one stretch of the old file on its own thread (see countOldFile in aligned-scan.ts), saying how far it is. */
export type StretchReply = { share: number } | { rows: ReturnType<typeof countStretch> } | { unsuitable: string } | { failed: string };

try {
  const rows = countStretch(workerData as RowStretch, (share) => parentPort!.postMessage({ share } satisfies StretchReply));
  parentPort!.postMessage({ rows } satisfies StretchReply, [rows.combinations.buffer, rows.first.buffer, rows.second.buffer]);
} catch (error) {
  const reply: StretchReply = error instanceof Unsuitable ? { unsuitable: error.message } : { failed: (error as Error).stack ?? String(error) };
  parentPort!.postMessage(reply);
}
