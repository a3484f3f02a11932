// Worker thread of cli/supervisor.ts: loads the command thread (compiled JavaScript beside it in dist/, or the
// TypeScript source through tsx during development), runs the command line of workerData (cli/command-thread.ts)
// and leaves its exit code as the thread's.
import { existsSync } from 'node:fs';
import { workerData } from 'node:worker_threads';

const compiled = existsSync(new URL('./command-thread.js', import.meta.url));
if (!compiled) (await import('tsx/esm/api')).register();
const { runCommandThread } = await import(compiled ? './command-thread.js' : './command-thread.ts');
process.exitCode = await runCommandThread(workerData);
