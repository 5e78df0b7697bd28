import { workerData } from 'node:worker_threads';
import { countStretch, type RowStretch } from './old-rows.js';
import { answerFromWorker } from './worker-thread.js';

/** Counts one stretch of the old file on its own thread (see countOldFile in aligned-scan.ts), saying how far it is. */
answerFromWorker(
  (onShare) => countStretch(workerData as RowStretch, onShare),
  (rows) => [rows.combinations.buffer, rows.first.buffer, rows.second.buffer],
);
