/** `isotrap sweep <config> --vary KEY=SPEC …` and `isotrap sweep merge <dirs…> --out DIR`. */
import { dirname, join, resolve } from 'node:path';
import { UserError } from '../../core/errors.ts';
import { parseYaml, readConfigText } from '../../io/config.ts';
import { toJson } from '../../jobs/design.ts';
import { mergeSweeps, planSweep, runSweep, type SweepInput, type SweepResult } from '../../jobs/sweep.ts';
import { figureSizeOption, numberOption, version, type CommonOptions } from '../options.ts';
import { makeProgress } from '../progress.ts';
import { num, table } from '../table.ts';

export interface SweepCliOptions extends CommonOptions {
  vary?: string[];
  target?: string;
  threads?: string;
  shard?: string;
}

/** --shard i/n */
function shardOption(v: string | undefined): { index: number; count: number } | undefined {
  if (v === undefined) return undefined;
  const m = /^(\d+)\/(\d+)$/.exec(v.trim());
  const s = m ? { index: Number(m[1]), count: Number(m[2]) } : null;
  if (!s || s.index < 1 || s.index > s.count) throw new UserError(`option --shard = ${JSON.stringify(v)} is not allowed: must be i/n with whole numbers 1 ≤ i ≤ n (this job's share of n)`);
  return s;
}

/** --threads n */
function threadsOption(v: string | undefined): number | undefined {
  const n = numberOption('threads', v);
  if (n !== undefined && !(Number.isInteger(n) && n >= 1 && n <= 1024)) throw new UserError(`option --threads = ${JSON.stringify(v)} is not allowed: must be a whole number from 1 to 1024`);
  return n;
}

function print(r: SweepResult, dir: string, opts: CommonOptions): number {
  const f = r.file;
  const failed = f.points.filter((p) => p.error !== null);
  if (opts.json) process.stdout.write(toJson({ plan: f.plan, shard: f.shard, answers: f.answers, adiabatic_time: f.adiabatic_time, failed: failed.map((p) => ({ index: p.index, values: p.values, error: p.error })), outputs: r.files }, 2) + '\n');
  else {
    const t = f.plan.units.time;
    const rows: [string, string][] = [
      ['scenario', f.name],
      ...f.plan.axes.map((a): [string, string] => [a.key, `${a.values.length} values (${a.spacing}), ${num(Math.min(...a.values))} … ${num(Math.max(...a.values))} ${a.unit}`]),
      ['points', `${f.points.length}${f.shard ? ` of ${f.plan.points} (shard ${f.shard.index}/${f.shard.count})` : ''}; ${r.computed} computed now, ${f.points.length - r.computed} from an earlier run${failed.length ? `; ${failed.length} could not run` : ''}`],
      ['target', `1 − F ≤ ${f.plan.target_infidelity}`],
    ];
    if (!f.shard && f.plan.axes.some((a) => a.key === 'protocol.duration')) {
      if (f.plan.axes.length === 1) rows.push(['adiabatic time', f.adiabatic_time === null ? 'bare ground state not at the target in the swept range' : `${num(f.adiabatic_time)} ${t} (bare drive, ground state)`]);
      const otherKey = f.plan.axes.find((a) => a.key !== 'protocol.duration')?.key;
      const budget = f.points.some((p) => p.limit_depth !== null || (p.limit_correction ?? null) !== null || (p.limit_coupling ?? null) !== null);
      for (const a of f.answers.filter((x) => x.subject === 'ground')) {
        const at = a.other === null ? '' : ` at ${otherKey} = ${num(a.other)}`;
        const inBudget = a.duration_in_budget !== null ? `; within the budget from ${num(a.duration_in_budget)} ${t}` : budget ? '; never within the budget in the swept range' : '';
        rows.push([`shortest duration${at}, ${a.drive}`, a.duration === null ? 'not reached' : `${num(a.duration)} ${t}${a.interpolated !== null ? ` (crossing ≈ ${num(a.interpolated)} ${t})` : ''}${inBudget}`]);
      }
    }
    const atomsKey = (k: string) => k === 'verify.interaction.atoms';
    for (const tol of (f.shard ? [] : f.tolerances ?? []).filter((x) => x.subject === 'ground' && (atomsKey(x.key) ? x.drive.startsWith('condensate_') : x.drive === 'cd'))) {
      const axisUnit = f.plan.axes.find((a) => a.key === tol.key)?.unit ?? '';
      const unit = axisUnit === 'as in the config' ? '' : axisUnit;
      rows.push([atomsKey(tol.key) ? `most atoms within the target, ${tol.drive}` : `tolerance (${tol.side} side), cd`, tol.tolerance === null ? 'not met at the smallest swept value' : `${num(tol.tolerance)} ${unit}${tol.interpolated !== null ? ` (crossing ≈ ${num(tol.interpolated)} ${unit})` : ''}`]);
    }
    rows.push(['outputs', dir]);
    process.stdout.write(`isotrap sweep\n${table(rows)}\n`);
    for (const p of failed) process.stderr.write(`warning: point ${p.index} (${p.values.join(', ')}): ${p.error}\n`);
  }
  return failed.length === f.points.length ? 1 : 0;
}

export async function sweepCommand(configPath: string, opts: SweepCliOptions): Promise<number> {
  const figures = figureSizeOption(opts.figures);
  const input: SweepInput = { raw: parseYaml(readConfigText(configPath), configPath), source: configPath, baseDir: dirname(resolve(configPath)) };
  const shard = shardOption(opts.shard);
  const setup = planSweep(input, { vary: opts.vary ?? [], target: numberOption('target', opts.target), shard });
  const dir = opts.out ?? join('outputs', `${setup.base.name}-sweep${shard ? `-${shard.index}of${shard.count}` : ''}`);
  const progress = makeProgress(`sweep (${setup.indices.length} points)`, opts.quiet ?? false);
  let result: SweepResult;
  try {
    result = await runSweep(input, setup, { dir, force: opts.force ?? false, threads: threadsOption(opts.threads), toolVersion: version(), figures, onProgress: (f) => progress.update(f) });
  } finally {
    progress.stop();
  }
  return print(result, dir, opts);
}

export async function sweepMergeCommand(dirs: string[], opts: CommonOptions): Promise<number> {
  if (!opts.out) throw new UserError('sweep merge needs --out <dir>: the folder of the joined sweep');
  const result = await mergeSweeps(dirs, { out: opts.out, force: opts.force ?? false, toolVersion: version(), figures: figureSizeOption(opts.figures) });
  return print(result, opts.out, opts);
}
