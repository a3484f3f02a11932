#!/usr/bin/env node
// Entry point: registers the TypeScript loader, then hands over to the CLI.
import { register } from 'tsx/esm/api';

register();
const { main } = await import('../src/cli/main.ts');
process.exitCode = await main(process.argv);
