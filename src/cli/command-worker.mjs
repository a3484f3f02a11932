// Worker thread of cli/supervisor.ts: registers the TypeScript loader (tsx), then runs the command line of
// workerData (cli/command-thread.ts) and leaves its exit code as the thread's.
import { workerData } from 'node:worker_threads';
import { register } from 'tsx/esm/api';

register();
const { runCommandThread } = await import('./command-thread.ts');
process.exitCode = await runCommandThread(workerData);
