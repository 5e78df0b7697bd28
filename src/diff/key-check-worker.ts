import { workerData } from 'node:worker_threads';
import { checkKeys, type KeyCheck } from './key-check.js';
import { answerFromWorker } from './worker-thread.js';

/** Checks the aligned scan's keys on its own thread (see checkKeysAside in aligned-scan.ts). */
answerFromWorker(() => checkKeys(workerData as KeyCheck));
