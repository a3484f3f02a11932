/** Options and helpers shared by the command files. */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { UserError } from '../core/errors.ts';

export interface CommonOptions {
  out?: string;
  force?: boolean;
  json?: boolean;
  quiet?: boolean;
}

/** --out, or outputs/<name> */
export function outputDir(name: string, opts: CommonOptions): string {
  return opts.out ?? join('outputs', name);
}

/** the package version */
export function version(): string {
  const pkg = JSON.parse(readFileSync(new URL('../../package.json', import.meta.url), 'utf8')) as { version: string };
  return pkg.version;
}

/** a numeric command-line option: undefined when absent, UserError naming the option when not a number */
export function numberOption(name: string, v: string | undefined): number | undefined {
  if (v === undefined) return undefined;
  const x = Number(v);
  if (!Number.isFinite(x)) throw new UserError(`option --${name} = ${JSON.stringify(v)} is not allowed: must be a finite number`);
  return x;
}

// every command reads the same scenario file, so all of them validate against the full schema (compare, lattice)
export { loadLatticeConfig as loadScenario } from '../io/config-lattice.ts';
