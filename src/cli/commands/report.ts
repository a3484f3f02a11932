/** `isotrap report <dir>`: re-render the figures and report.html of a finished output folder. */
import { toJson } from '../../jobs/design.ts';
import { renderFolder } from '../../jobs/report.ts';
import { figureSizeOption, version, type CommonOptions } from '../options.ts';
import { table } from '../table.ts';

export async function reportCommand(dir: string, opts: CommonOptions): Promise<number> {
  const files = renderFolder(dir, { force: opts.force ?? false, toolVersion: version(), figures: figureSizeOption(opts.figures) });
  if (opts.json) process.stdout.write(toJson({ outputs: files }, 2) + '\n');
  else process.stdout.write(`isotrap report\n${table(files.map((f) => ['wrote', f] as [string, string]))}\n`);
  return 0;
}
