// Worker thread of jobs/sweep.ts: loads the sweep module (compiled JavaScript beside it in dist/, or the TypeScript
// sources through tsx during development), then answers { id, task } (a PointTask) by running the point, writing it
// atomically (runAndWritePoint) and posting the point (plain JSON-able data; no buffers are transferred).
import { existsSync } from 'node:fs';
import { parentPort } from 'node:worker_threads';

const compiled = existsSync(new URL('./sweep.js', import.meta.url));
if (!compiled) (await import('tsx/esm/api')).register();
const { runAndWritePoint } = await import(compiled ? './sweep.js' : './sweep.ts');
/** this thread's last design (jobs/sweep.ts DesignCache) */
const cache = { last: null };

parentPort?.on('message', async ({ id, task }) => {
  try {
    parentPort?.postMessage({ id, result: await runAndWritePoint(task, cache) });
  } catch (e) {
    parentPort?.postMessage({ id, error: e instanceof Error ? `${e.name}: ${e.message}` : String(e) });
  }
});
