import { Worker, parentPort } from 'node:worker_threads';
import { Unsuitable } from './old-rows.js';

/** What a worker of the aligned scan says: how far it is, its answer, or why it stopped. */
type WorkerReply<T> = { share: number } | { done: T } | { unsuitable: string } | { failed: string };

/**
 * Run `script` on a worker thread with `data`, handing `transfer` over to it. An Unsuitable there
 * rejects `result` with an Unsuitable here; `stop` ends the thread when its answer is no longer wanted.
 */
export function startWorker<T>(script: URL, data: unknown, transfer: ArrayBuffer[], onShare?: (share: number) => void): { result: Promise<T>; stop(): void } {
  const worker = new Worker(script, { workerData: data, transferList: transfer });
  const result = new Promise<T>((resolve, reject) => {
    worker.on('message', (reply: WorkerReply<T>) => {
      if ('share' in reply) onShare?.(reply.share);
      else if ('done' in reply) resolve(reply.done);
      else if ('unsuitable' in reply) reject(new Unsuitable(reply.unsuitable));
      else reject(new Error(reply.failed));
    });
    worker.once('error', reject);
  });
  result.catch(() => undefined); // awaited unless the caller stopped waiting (another worker failed first)
  return { result, stop: () => void worker.terminate() };
}

/**
 * The worker's side of startWorker: do `work`, passing on how far it is, then post its answer (handing
 * over the buffers `transfer` names) or why it stopped.
 */
export function answerFromWorker<T>(work: (onShare: (share: number) => void) => T, transfer: (answer: T) => ArrayBuffer[] = () => []): void {
  const port = parentPort!;
  try {
    const done = work((share) => port.postMessage({ share } satisfies WorkerReply<T>));
    port.postMessage({ done } satisfies WorkerReply<T>, transfer(done));
  } catch (error) {
    const reply: WorkerReply<T> = error instanceof Unsuitable ? { unsuitable: error.message } : { failed: (error as Error).stack ?? String(error) };
    port.postMessage(reply);
  }
}
