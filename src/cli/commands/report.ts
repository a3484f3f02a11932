/** `isotrap report <dir>`: re-render the figures and report.html of a finished output folder. */
import { toJson } from '../../jobs/design.ts';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { renderFolder } from '../../jobs/report.ts';
import { figureSizeOption, version, type CommonOptions } from '../options.ts';
import { table } from '../table.ts';

export async function reportCommand(dir: string, opts: CommonOptions): Promise<number> {
  const settings = { force: opts.force ?? false, toolVersion: version(), figures: figureSizeOption(opts.figures) };
  // a sweep folder renders through its own job (jobs/sweep.ts), which reads sweep.json and the points
  const files = existsSync(join(dir, 'sweep.json')) ? await (await import('../../jobs/sweep.ts')).renderSweepFolder(dir, settings) : renderFolder(dir, settings);
  if (opts.json) process.stdout.write(toJson({ outputs: files }, 2) + '\n');
  else process.stdout.write(`isotrap report\n${table(files.map((f) => ['wrote', f] as [string, string]))}\n`);
  return 0;
}
