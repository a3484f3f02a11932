/**
 * A small pool of worker threads (node:worker_threads) for independent tasks: each worker takes the next task when
 * it posts its previous result, so uneven task costs balance; results come back in task order. The worker script
 * answers each message `{ id, task }` with `{ id, result }` or `{ id, error }` (a message string).
 */
import { Worker } from 'node:worker_threads';
import { availableParallelism } from 'node:os';

/** worker threads the machine can run at once */
export function coreCount(): number {
  return availableParallelism();
}

interface Reply<R> {
  id: number;
  result?: R;
  error?: string;
}

/**
 * Run `tasks` on `size` workers started from `script`; `onResult(done, total)` after each result. Rejects with
 * the first worker error (the remaining workers are terminated).
 */
export function runPool<T, R>(script: URL, tasks: readonly T[], size: number, onResult?: (done: number, total: number) => void): Promise<R[]> {
  if (!(Number.isInteger(size) && size >= 1)) throw new RangeError(`runPool: size must be a whole number ≥ 1, got ${size}`);
  const results = new Array<R>(tasks.length);
  if (tasks.length === 0) return Promise.resolve(results);
  const workers = Array.from({ length: Math.min(size, tasks.length) }, () => new Worker(script));
  let next = 0;
  let done = 0;
  return new Promise<R[]>((resolve, reject) => {
    const stop = () => workers.forEach((w) => void w.terminate());
    const feed = (w: Worker) => {
      if (next < tasks.length) {
        const id = next++;
        w.postMessage({ id, task: tasks[id] });
      }
    };
    for (const w of workers) {
      w.on('message', (m: Reply<R>) => {
        if (m.error !== undefined) {
          stop();
          reject(new Error(m.error));
          return;
        }
        results[m.id] = m.result as R;
        done++;
        onResult?.(done, tasks.length);
        if (done === tasks.length) {
          stop();
          resolve(results);
        } else feed(w);
      });
      w.on('error', (e) => {
        stop();
        reject(e);
      });
      feed(w);
    }
  });
}
