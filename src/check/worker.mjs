// Worker thread of check/parallel.ts: loads the check modules (compiled JavaScript beside it in dist/, or the
// TypeScript sources through tsx during development), then answers
// { id, task: { kind: 'fit', length, n, uk, ukNext } } with fitInterval (check/flowfit.ts) and
// { id, task: { kind: 'spectrum', length, n, u } } with the bound-state energies (check/spectrum.ts).
import { existsSync } from 'node:fs';
import { parentPort } from 'node:worker_threads';

const compiled = existsSync(new URL('./flowfit.js', import.meta.url));
if (!compiled) (await import('tsx/esm/api')).register();
const ext = compiled ? '.js' : '.ts';
const { fitInterval } = await import(`./flowfit${ext}`);
const { frameEnergies } = await import(`./spectrum${ext}`);
const { makeGrid } = await import(`../spectral/grid${ext}`);

parentPort?.on('message', ({ id, task }) => {
  try {
    const grid = makeGrid(task.length, task.n);
    const result = task.kind === 'fit' ? fitInterval(grid, task.uk, task.ukNext) : frameEnergies(grid, task.u);
    parentPort?.postMessage({ id, result });
  } catch (e) {
    parentPort?.postMessage({ id, error: e instanceof Error ? `${e.name}: ${e.message}` : String(e) });
  }
});
