/** Options and helpers shared by the command files. */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { UserError } from '../core/errors.ts';
import { FIGURE_SIZES, isFigureSize, type FigureSize } from '../report/style.ts';

export interface CommonOptions {
  out?: string;
  force?: boolean;
  json?: boolean;
  quiet?: boolean;
  /** figure size of the commands that draw figures (figureSizeOption) */
  figures?: string;
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

/** --figures: paper (default) or slides; UserError naming the option, the value and the sizes allowed otherwise */
export function figureSizeOption(v: string | undefined): FigureSize {
  if (v === undefined) return 'paper';
  if (!isFigureSize(v)) throw new UserError(`option --figures = ${JSON.stringify(v)} is not allowed: must be one of ${FIGURE_SIZES.join(', ')}`);
  return v;
}

/** help text of --figures, one for every command that draws figures */
export const FIGURES_HELP = `figure size: ${FIGURE_SIZES.join(' or ')} (paper: journal columns, 7 pt text; slides: 16:9 panels 254 mm wide, text ≥ 16 pt)`;
