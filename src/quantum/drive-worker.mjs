// Worker thread of quantum/verify.ts: loads the drive modules (compiled JavaScript beside it in dist/, or the
// TypeScript sources through tsx during development), keeps { shared } (a KdvDriveSpec without σ: grid, sequence,
// ramp, drift, errors), then answers { id, task: { sigma, group } } with runGroup(kdvDriveOf({ ...shared, sigma }),
// group) and { id, task: { kind: 'basis', lambda, levels, method } } with labBasis(shared, …) (quantum/drive-group.ts).
import { existsSync } from 'node:fs';
import { parentPort } from 'node:worker_threads';

const compiled = existsSync(new URL('./drive-group.js', import.meta.url));
if (!compiled) (await import('tsx/esm/api')).register();
const { kdvDriveOf, labBasis, runGroup } = await import(`./drive-group${compiled ? '.js' : '.ts'}`);
let shared = null;

parentPort?.on('message', (m) => {
  if (m.shared !== undefined) {
    shared = m.shared;
    return;
  }
  const { id, task } = m;
  try {
    if (shared === null) throw new Error('drive worker: a task came before the shared drive data');
    const result = task.kind === 'basis' ? labBasis(shared, task.lambda, task.levels, task.method) : runGroup(kdvDriveOf({ ...shared, sigma: task.sigma }), task.group);
    parentPort?.postMessage({ id, result });
  } catch (e) {
    parentPort?.postMessage({ id, error: e instanceof Error ? `${e.name}: ${e.message}` : String(e) });
  }
});
