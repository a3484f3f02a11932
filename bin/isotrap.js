#!/usr/bin/env node
// Entry point: registers the TypeScript loader, then hands over to the CLI (commands that write run in a worker
// thread, so that Ctrl-C stops them cleanly: src/cli/supervisor.ts).
import { register } from 'tsx/esm/api';

register();
const { runCli } = await import('../src/cli/supervisor.ts');
process.exitCode = await runCli(process.argv);
