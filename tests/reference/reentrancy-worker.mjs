// Worker-thread bootstrap of the re-entrancy test: registers the TypeScript loader (tsx), then runs the jobs.
import { parentPort, workerData } from 'node:worker_threads';
import { register } from 'tsx/esm/api';

register();
const { runAll } = await import('./reentrancy-jobs.ts');
parentPort?.postMessage(runAll(workerData.variant));
