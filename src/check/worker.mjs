// Worker thread of check/parallel.ts: registers the TypeScript loader (tsx), then answers
// { id, task: { kind: 'fit', length, n, uk, ukNext } } with fitInterval (check/flowfit.ts) and
// { id, task: { kind: 'spectrum', length, n, u } } with the bound-state energies (check/spectrum.ts).
import { parentPort } from 'node:worker_threads';
import { register } from 'tsx/esm/api';

register();
const { fitInterval } = await import('./flowfit.ts');
const { frameEnergies } = await import('./spectrum.ts');
const { makeGrid } = await import('../spectral/grid.ts');

parentPort?.on('message', ({ id, task }) => {
  try {
    const grid = makeGrid(task.length, task.n);
    const result = task.kind === 'fit' ? fitInterval(grid, task.uk, task.ukNext) : frameEnergies(grid, task.u);
    parentPort?.postMessage({ id, result });
  } catch (e) {
    parentPort?.postMessage({ id, error: e instanceof Error ? `${e.name}: ${e.message}` : String(e) });
  }
});
