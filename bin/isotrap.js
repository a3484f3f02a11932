#!/usr/bin/env node
// Entry point: the compiled command line in dist/ (built by `npm ci` through the prepare script, or `npm run
// build`). Commands that write run in a worker thread so that Ctrl-C stops them cleanly (src/cli/supervisor.ts).
import { existsSync } from 'node:fs';

const entry = new URL('../dist/cli/supervisor.js', import.meta.url);
if (!existsSync(entry)) {
  process.stderr.write('isotrap: the compiled program is missing (dist/): run `npm run build` (npm ci does it) first\n');
  process.exit(2);
}
const { runCli } = await import(entry.href);
process.exitCode = await runCli(process.argv);
