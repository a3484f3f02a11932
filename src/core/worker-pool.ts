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
 * Workers started at construction (so their module loading overlaps the caller's own work), given `shared` once
 * each (`{ shared }`, before any task), then one `run` of tasks: each worker takes the next task when it posts its
 * previous result, so uneven task costs balance; results come back in task order. `run` rejects with the first
 * worker error, or when `signal` aborts; the workers are terminated when it settles (or by `close`).
 */
export class WorkerPool<T, R> {
  private readonly workers: Worker[];
  constructor(script: URL, size: number, shared?: unknown) {
    if (!(Number.isInteger(size) && size >= 1)) throw new RangeError(`WorkerPool: size must be a whole number ≥ 1, got ${size}`);
    this.workers = Array.from({ length: size }, () => new Worker(script));
    if (shared !== undefined) for (const w of this.workers) w.postMessage({ shared });
  }
  get size(): number {
    return this.workers.length;
  }
  close(): void {
    this.workers.forEach((w) => void w.terminate());
  }
  run(tasks: readonly T[], onResult?: (done: number, total: number) => void, signal?: AbortSignal): Promise<R[]> {
    const results = new Array<R>(tasks.length);
    if (tasks.length === 0) {
      this.close();
      return Promise.resolve(results);
    }
    const workers = this.workers;
    let next = 0;
    let done = 0;
    return new Promise<R[]>((resolve, reject) => {
      const stop = () => this.close();
      signal?.addEventListener('abort', () => {
        stop();
        reject(new Error('the work was cancelled'));
      });
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
}

/** Run `tasks` on `size` workers started from `script` (WorkerPool); `onResult(done, total)` after each result. */
export function runPool<T, R>(script: URL, tasks: readonly T[], size: number, onResult?: (done: number, total: number) => void, signal?: AbortSignal): Promise<R[]> {
  if (!(Number.isInteger(size) && size >= 1)) throw new RangeError(`runPool: size must be a whole number ≥ 1, got ${size}`);
  if (tasks.length === 0) return Promise.resolve([]);
  return new WorkerPool<T, R>(script, Math.min(size, tasks.length)).run(tasks, onResult, signal);
}
