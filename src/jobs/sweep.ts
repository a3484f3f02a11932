/**
 * `sweep`: the design and its Schrödinger proof (jobs/design.ts, jobs/verify.ts, exactly as `verify` runs them) at
 * every point of a grid over one or two numeric config keys, each point written as soon as it is done
 * (points/p<index>.json, atomically) so that an interrupted sweep resumes where it stopped; then the tidy table, the
 * answers (the shortest durations at which each drive meets a target infidelity) and the report.
 *
 * Points run on worker threads (jobs/sweep-worker.mjs) or in this thread; each point is a pure function of its
 * config, so the results do not depend on the thread count, the order or the sharding (`--shard i/n` takes the
 * points with index ≡ i − 1 mod n; `mergeSweeps` joins the shards). A design is computed once for the points that
 * differ only in protocol.* and verify.* keys (the design does not read them).
 */
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { AcceptanceFailure, NumericalError, UserError } from '../core/errors.ts';
import { coreCount, runPool } from '../core/worker-pool.ts';
import { parseConfigWith, type Config } from '../io/config.ts';
import { latticeConfigSchema, type LatticeConfig } from '../io/config-lattice.ts';
import { largestLatticeCoupling } from './lattice.ts';
import { assertDesignAffordable, assertVerifyAffordable, verifyShots } from '../io/cost.ts';
import { removeStaleTemporaries, writeFileAtomic } from '../io/files.ts';
import { publishOutput } from '../io/output-events.ts';
import { RunFolder, configIdentity, requireOneConfig, writeRun } from '../io/run-folder.ts';
import {
  readSweepFile, readSweepPlan, readSweepPoint, sweepCsv, SWEEP_FORMAT, SWEEP_PLAN_FORMAT, SWEEP_POINT_FORMAT,
  type SweepAnswer, type SweepAxis, type SweepDrive, type SweepFile, type SweepPlan, type SweepPoint, type SweepTolerance,
} from '../io/formats/sweep.ts';
import { estimateVerifyCost } from '../quantum/cost.ts';
import type { FigureSize } from '../report/style.ts';
import { stringify } from 'yaml';
import { makeContext, type JobContext } from './context.ts';
import { runDesign, toJson, type DesignResult } from './design.ts';
import { runVerify, TRACE_SAMPLES } from './verify.ts';

export type { SweepFile, SweepPoint };
export const SWEEP_FILES = ['sweep.json', 'sweep.csv'] as const;
export const POINTS_FOLDER = 'points';
export const PLAN_FILE = 'plan.json';
/** at most this many values per key (a duration grid of a thousand points is already a day of computing) */
export const MAX_VALUES_PER_KEY = 1000;
/** at most this many points in one sweep (split larger ones with --shard) */
export const MAX_SWEEP_POINTS = 10000;
/** infidelity a drive must reach by default: a 0.1 % loss per operation, the usual threshold of a useful state
 *  preparation (common practice) */
export const DEFAULT_TARGET_INFIDELITY = 1e-3;
/** the config keys the design does not read: points differing only in them share one design */
const DESIGN_FREE_SECTIONS = ['protocol', 'verify', 'name', 'description', 'meta', 'compare', 'lattice'] as const;
/** infidelities at or below zero (round-off of F ≈ 1) are taken as this on the log axes of the interpolation */
const INFIDELITY_FLOOR = 1e-16;

/** the config as read (YAML data) with where it came from; every point is this with its overrides, validated */
export interface SweepInput {
  raw: unknown;
  source: string;
  baseDir: string;
}

type PathPart = string | number;

/** `a.b[0].c` → ['a', 'b', 0, 'c'] */
function keyPath(key: string): PathPart[] | null {
  if (!/^[A-Za-z_][A-Za-z0-9_]*(\[\d+\]|\.[A-Za-z_][A-Za-z0-9_]*)*$/.test(key)) return null;
  return key.match(/[A-Za-z_][A-Za-z0-9_]*|\[\d+\]/g)!.map((p) => (p.startsWith('[') ? Number(p.slice(1, -1)) : p));
}

function valueAt(data: unknown, path: readonly PathPart[]): unknown {
  let cur = data;
  for (const p of path) {
    if (cur === null || typeof cur !== 'object' || !Object.hasOwn(cur, p)) return undefined;
    cur = (cur as Record<PathPart, unknown>)[p];
  }
  return cur;
}

/** a deep copy of the YAML data with `value` at `path` (missing mappings on the way are created) */
function withValue(data: unknown, path: readonly PathPart[], value: number, key: string): unknown {
  const copy = structuredClone(data) as Record<PathPart, unknown>;
  let cur: Record<PathPart, unknown> = copy;
  path.forEach((p, i) => {
    if (i === path.length - 1) return void (cur[p] = value);
    const next = cur[p];
    if (next === undefined) cur[p] = typeof path[i + 1] === 'number' ? [] : {};
    else if (next === null || typeof next !== 'object') throw new UserError(`--vary ${key} is not allowed: ${path.slice(0, i + 1).join('.')} is ${JSON.stringify(next)}, not a section with keys`);
    cur = cur[p] as Record<PathPart, unknown>;
  });
  return copy;
}

const SPEC_RULE = 'SPEC must be a:b:lin:n (n values evenly spaced from a to b), a:b:log:n (n values evenly spaced in log from a > 0 to b > 0) or a comma list v1,v2,…';

/** the values of one SPEC (see SPEC_RULE) */
function specValues(key: string, spec: string): { spacing: SweepAxis['spacing']; values: number[] } {
  const bad = (why: string) => new UserError(`--vary ${key}=${spec} is not allowed: ${why}; ${SPEC_RULE}`);
  const range = /^([^:]+):([^:]+):(lin|log):(\d+)$/.exec(spec);
  const number = (s: string) => {
    const v = Number(s.trim());
    if (s.trim() === '' || !Number.isFinite(v)) throw bad(`${JSON.stringify(s)} is not a finite number`);
    return v;
  };
  if (range) {
    const [a, b, spacing, n] = [number(range[1]), number(range[2]), range[3] as 'lin' | 'log', Number(range[4])];
    if (!(n >= 1 && n <= MAX_VALUES_PER_KEY)) throw bad(`the count ${n} must be from 1 to ${MAX_VALUES_PER_KEY}`);
    if (spacing === 'log' && !(a > 0 && b > 0)) throw bad('log spacing needs a > 0 and b > 0');
    if (n === 1) return { spacing, values: [a] };
    const at = (i: number) => (spacing === 'lin' ? a + ((b - a) * i) / (n - 1) : Math.exp(Math.log(a) + ((Math.log(b) - Math.log(a)) * i) / (n - 1)));
    return { spacing, values: Array.from({ length: n }, (_, i) => (i === 0 ? a : i === n - 1 ? b : at(i))) };
  }
  if (spec.includes(':')) throw bad('a range needs four parts separated by ":"');
  const values = spec.split(',').map(number);
  if (values.length > MAX_VALUES_PER_KEY) throw bad(`${values.length} values, at most ${MAX_VALUES_PER_KEY}`);
  if (new Set(values).size !== values.length) throw bad('the list repeats a value');
  return { spacing: 'list', values };
}

/** the unit of a config key's values, from its name (the config's own rules, io/config.ts) */
export function keyUnit(key: string, labels: { energy: string; time: string; length: string; temperature: string }): string {
  const leaf = key.replace(/\[\d+\]/g, '').split('.').pop() ?? key;
  if (leaf === 'duration') return labels.time;
  if (leaf === 'temperature') return labels.temperature;
  if (leaf === 'depth' || leaf === 'depths') return labels.energy;
  if (['width', 'center', 'length', 'separation', 'positions', 'distance', 'gap', 'feature'].includes(leaf)) return labels.length;
  if (leaf === 'drift') return `${labels.length} per unit λ`;
  if (leaf === 'kappa') return `1/${labels.length}`;
  if (['points', 'states', 'fermions', 'frames', 'samples'].includes(leaf)) return 'count';
  if (leaf === 'lambda_end' || leaf === 'tolerance' || leaf === 'target_infidelity') return 'dimensionless';
  if (leaf === 'atoms') return 'atoms';
  if (leaf === 'scattering_length_nm') return 'nm';
  if (leaf === 'scattering_length_bohr') return 'a₀';
  if (leaf === 'transverse_hz') return 'Hz';
  if (leaf === 'g1d') return `${labels.energy}·${labels.length} per atom`;
  return 'as in the config';
}

/** validate the data of one point through the full scenario schema (the same limits as a single run) */
function pointConfig(input: SweepInput, axes: readonly { key: string; path: PathPart[] }[], values: readonly number[]): Config {
  let raw = input.raw;
  axes.forEach((a, i) => (raw = withValue(raw, a.path, values[i], a.key)));
  try {
    return parseConfigWith(latticeConfigSchema, raw, input.source, input.baseDir);
  } catch (err) {
    if (!(err instanceof UserError)) throw err;
    const at = axes.map((a, i) => `${a.key} = ${values[i]}`).join(', ');
    throw new UserError(`--vary at ${at}: ${err.message}`);
  }
}

/** one `--vary KEY=SPEC`: the key must name a number of the validated config (or a numeric key the schema accepts) */
function parseVary(input: SweepInput, base: Config, arg: string): { key: string; path: PathPart[]; spacing: SweepAxis['spacing']; values: number[] } {
  const eq = arg.indexOf('=');
  if (eq < 1) throw new UserError(`--vary ${JSON.stringify(arg)} is not allowed: must be KEY=SPEC, e.g. protocol.duration=0.2:10:log:25; ${SPEC_RULE}`);
  const key = arg.slice(0, eq).trim();
  const path = keyPath(key);
  if (!path) throw new UserError(`--vary ${key} is not allowed: a key is a dotted path of config keys, list items as [i] (e.g. protocol.duration, initial.wells[0].depth)`);
  const { spacing, values } = specValues(key, arg.slice(eq + 1).trim());
  const current = valueAt(base, path);
  if (current !== undefined && typeof current !== 'number') {
    throw new UserError(`--vary ${key} is not allowed: the key holds ${JSON.stringify(current)?.slice(0, 60)}, not a number; only numeric keys can be swept`);
  }
  const probe = pointConfig(input, [{ key, path }], [values[0]]);
  if (typeof valueAt(probe, path) !== 'number') throw new UserError(`--vary ${key} is not allowed: the config has no numeric key ${key}`);
  return { key, path, spacing, values };
}

function hash(text: string): string {
  return createHash('sha256').update(text).digest('hex').slice(0, 16);
}

export interface SweepRequest {
  /** the `--vary` arguments, one or two */
  vary: readonly string[];
  target?: number;
  /** 1-based shard index and count */
  shard?: { index: number; count: number };
}

/** what a sweep computes, validated: the plan, every point's config and the shard's point indices */
export interface SweepSetup {
  base: Config;
  plan: SweepPlan;
  axes: { key: string; path: PathPart[] }[];
  configs: Config[];
  /** the points of this shard (all without one) */
  indices: number[];
  /** estimated seconds of each point (quantum/cost.ts), the weights of the progress */
  work: number[];
  shard: { index: number; count: number } | null;
}

/** the value indices of point p (the first key varies slowest) */
export function pointValues(plan: Pick<SweepPlan, 'axes'>, p: number): number[] {
  const [a, b] = plan.axes;
  return b ? [a.values[Math.floor(p / b.values.length)], b.values[p % b.values.length]] : [a.values[p]];
}

/**
 * Validate the request: keys and SPECs, every point's config (through the scenario schema), the target and the
 * shard, and the cost of every point (io/cost.ts), all before anything is computed or written.
 */
export function planSweep(input: SweepInput, request: SweepRequest): SweepSetup {
  const base = parseConfigWith(latticeConfigSchema, input.raw, input.source, input.baseDir);
  if (request.vary.length < 1 || request.vary.length > 2) throw new UserError(`--vary is given ${request.vary.length} times: a sweep varies one or two keys (e.g. --vary protocol.duration=0.2:10:log:25)`);
  const target = request.target ?? DEFAULT_TARGET_INFIDELITY;
  if (!(target > 0 && target < 1)) throw new UserError(`option --target = ${target} is not allowed: must be an infidelity 1 − F in (0, 1)`);
  const parsed = request.vary.map((v) => parseVary(input, base, v));
  if (parsed.length === 2 && parsed[0].key === parsed[1].key) throw new UserError(`--vary ${parsed[0].key} is given twice: vary two different keys`);
  const points = parsed.reduce((n, a) => n * a.values.length, 1);
  if (points > MAX_SWEEP_POINTS) throw new UserError(`--vary gives ${points} points, over the limit of ${MAX_SWEEP_POINTS}: use fewer values`);
  const shard = request.shard ?? null;
  if (shard && !(Number.isInteger(shard.count) && shard.count >= 1 && Number.isInteger(shard.index) && shard.index >= 1 && shard.index <= shard.count)) {
    throw new UserError(`option --shard = ${shard.index}/${shard.count} is not allowed: must be i/n with whole numbers 1 ≤ i ≤ n`);
  }
  const ctx0 = makeContext(base);
  const labels = ctx0.units.labels;
  const units = { energy: labels.energy, time: labels.time, length: labels.length, temperature: labels.temperature };
  const axes: SweepAxis[] = parsed.map((a) => ({ key: a.key, unit: keyUnit(a.key, units), spacing: a.spacing, values: a.values }));
  const configHash = configIdentity(base).configHash;
  const id = hash(JSON.stringify({ configHash, axes, target }));
  const plan: SweepPlan = { format: SWEEP_PLAN_FORMAT, config_hash: configHash, id, axes, points, target_infidelity: target, units };
  const configs = Array.from({ length: points }, (_, p) => pointConfig(input, parsed, pointValues(plan, p)));
  const indices = Array.from({ length: points }, (_, p) => p).filter((p) => !shard || p % shard.count === shard.index - 1);
  const work = new Array<number>(points).fill(0);
  contextsInOrder(configs, indices, (p, context) => {
    assertPointAffordable(configs[p], context);
    work[p] = pointWork(configs[p], context);
  });
  return { base, plan, axes: parsed.map((a) => ({ key: a.key, path: a.path })), configs, indices, shard, work };
}

/** the design key of a config: everything but the sections the design does not read */
function designKey(config: Config): string {
  const rest: Record<string, unknown> = { ...config };
  for (const k of DESIGN_FREE_SECTIONS) delete rest[k];
  return JSON.stringify(rest);
}

/** the job context of each design key, computed once while the points are taken in design-key order (one held at a time) */
function contextsInOrder(configs: readonly Config[], indices: readonly number[], use: (p: number, context: JobContext) => void): void {
  const order = [...indices].sort((a, b) => designKey(configs[a]).localeCompare(designKey(configs[b])) || a - b);
  let lastKey: string | null = null;
  let context: JobContext | null = null;
  for (const p of order) {
    const key = designKey(configs[p]);
    if (lastKey !== key || !context) [lastKey, context] = [key, makeContext(configs[p])];
    use(p, context);
  }
}

/** the pipeline's refusals (jobs/run.ts) for one point */
function assertPointAffordable(config: Config, context: JobContext): void {
  if (!config.protocol) throw new UserError(`${config.meta.source}: protocol is missing: a sweep verifies every point and needs e.g. protocol: { duration: 2.0, ramp: sin2 } (or --vary protocol.duration=…)`);
  assertDesignAffordable(config, context, true);
  assertVerifyAffordable(config, context, context.units.timeToNatural(config.protocol.duration), TRACE_SAMPLES);
}

/** estimated seconds of one point (quantum/cost.ts), the weight of its progress */
function pointWork(config: Config, c: JobContext): number {
  let maxAbsU = 0;
  for (const v of c.u0) maxAbsU = Math.max(maxAbsU, Math.abs(v));
  return estimateVerifyCost({
    points: c.grid.n, length: c.grid.length, maxAbsU, lambdaEnd: config.flow.lambda_end, ramp: config.protocol?.ramp ?? 'sin2',
    duration: c.units.timeToNatural(config.protocol?.duration ?? 1), states: config.verify?.states ?? 8, tol: config.verify?.tolerance ?? 1e-8,
    correctedDrives: 1, bareDrives: 1, traceSamples: TRACE_SAMPLES, u0: c.u0,
    shots: verifyShots(config),
    stepControl: config.verify?.step_control,
  }).seconds;
}

/** one point as handed to a worker: JSON-able, so the worker validates the same config again */
export interface PointTask {
  input: SweepInput;
  axes: { key: string; path: PathPart[] }[];
  plan: string;
  index: number;
  values: number[];
  /** where the finished point is written (atomically) */
  file: string;
}

/** the last design of a thread, reused while the design key stays the same (each thread holds its own) */
export interface DesignCache {
  last: { key: string; design: DesignResult } | null;
}

/** the per-drive record of a finished verify, in the config's units (energies through the design's unit system) */
function driveRecords(design: DesignResult, verify: Awaited<ReturnType<typeof runVerify>>): SweepDrive[] {
  const E = design.ctx.units.energyFromNatural;
  const { file, natural } = verify;
  const single: SweepDrive[] = natural.drives.map((d) => ({
    drive: d.drive,
    min_fidelity: d.minFidelity,
    ...(d.paintedRange ? { painted_depth: -E(d.paintedRange.min) } : {}),
    ...(d.drive === 'cd' && file.cd_strength ? { correction_size: file.cd_strength.max_leakage } : {}),
    states: natural.states.map((s, i) => ({ index: s.index, energy: file.states[i].energy, fidelity: d.fidelity[i], excess: E(d.excessEnergy[i]) })),
    thermal: d.thermal ? { temperature: file.thermal?.temperature ?? NaN, fidelity: d.thermal.ensembleFidelity, uhlmann: d.thermal.uhlmannFidelity ?? NaN, mean_excess: E(d.thermal.meanExcessEnergy) } : null,
    fermions: d.fermions ? { count: d.fermions.particles, fidelity: d.fermions.manyBodyFidelity } : null,
  }));
  return [...single, ...condensateRecords(file)];
}

/** the condensate's drives (verify.interaction) as drives of one subject, the nonlinear ground state: names
 *  condensate_cd, condensate_painted, condensate_bare; energies per atom */
function condensateRecords(file: Awaited<ReturnType<typeof runVerify>>['file']): SweepDrive[] {
  const c = file.interaction;
  if (!c) return [];
  const name = { cd: 'condensate_cd', painted_condensate: 'condensate_painted', bare: 'condensate_bare' } as const;
  return c.drives.map((d) => ({
    drive: name[d.drive],
    min_fidelity: d.fidelity,
    ...(d.drive === 'painted_condensate' && c.painted_range ? { painted_depth: -c.painted_range.deepest } : {}),
    // the condensate's cubic drive is the single-particle correction: the same size against budget.correction
    ...(d.drive === 'cd' ? { correction_size: file.cd_strength.max_leakage } : {}),
    states: [{ index: 0, energy: c.end.energy, fidelity: d.fidelity, excess: d.excess }],
    thermal: null,
    fermions: null,
  }));
}

/**
 * Run one point: design (reused from the previous point when its design key is the same) and verify, as the
 * `verify` command runs them. A point the numerics refuse (a flow that breaks, a budget not met) is recorded with
 * its message instead of failing the sweep.
 */
export async function runPoint(task: PointTask, cache: DesignCache): Promise<SweepPoint> {
  const started = performance.now();
  const config = pointConfig(task.input, task.axes, task.values);
  const point: SweepPoint = { format: SWEEP_POINT_FORMAT, plan: task.plan, index: task.index, values: task.values, error: null, drives: [], deepest: NaN, limit_depth: null, accepted: false, warnings: [], seconds: 0 };
  try {
    const key = designKey(config);
    if (cache.last?.key !== key) {
      cache.last = null; // the old design's dense output is released before the new one is computed
      cache.last = { key, design: runDesign(config, { context: makeContext(config) }) };
    }
    const design = cache.last.design;
    point.deepest = design.summary.budgets.deepest;
    point.limit_depth = design.summary.budgets.limit_depth;
    point.limit_correction = config.budget?.correction ?? null;
    point.limit_coupling = config.budget?.coupling ?? null;
    if (!design.summary.complete) throw new AcceptanceFailure(`the ${config.flow.dispersion} flow stops at λ = ${design.summary.lambda_reached} before flow.lambda_end = ${config.flow.lambda_end}`);
    // points run in parallel already: each verify keeps to its thread
    const verify = await runVerify(config, design, { threads: 1 });
    point.drives = driveRecords(design, verify);
    point.accepted = verify.file.accepted;
    point.warnings = [...design.summary.warnings, ...verify.file.warnings];
    // with a lattice section, the corrected drive's largest coupling on that lattice (budget.coupling)
    if ((config as LatticeConfig).lattice) {
      try {
        const coupling = largestLatticeCoupling(config as LatticeConfig);
        // the condensate's cubic drive is the same correction
        for (const d of point.drives) if (d.drive === 'cd' || d.drive === 'condensate_cd') d.lattice_coupling = coupling;
      } catch (err) {
        if (!(err instanceof UserError)) throw err;
        point.warnings.push(`the lattice coupling (budget.coupling) was not evaluated: ${err.message}`);
      }
    }
  } catch (err) {
    if (!(err instanceof UserError || err instanceof NumericalError || err instanceof AcceptanceFailure)) throw err;
    point.error = err.message;
  }
  point.seconds = (performance.now() - started) / 1000;
  return point;
}

/** run a point and write it at once (worker threads call this too) */
export async function runAndWritePoint(task: PointTask, cache: DesignCache): Promise<SweepPoint> {
  const point = await runPoint(task, cache);
  writeFileAtomic(task.file, toJson(point, 1));
  return point;
}

export function pointFile(dir: string, index: number): string {
  return join(dir, POINTS_FOLDER, `p${String(index).padStart(5, '0')}.json`);
}

export interface SweepOptions {
  dir: string;
  force: boolean;
  /** worker threads (default: every core); 1 runs the points in this thread */
  threads?: number;
  toolVersion: string;
  figures?: FigureSize;
  /** fraction of the estimated work done, after each point */
  onProgress?: (fraction: number, done: number, total: number) => void;
}

export interface SweepResult {
  file: SweepFile;
  files: string[];
  /** points computed now (the others were read back from an earlier, interrupted run) */
  computed: number;
}

/** the points folder with its plan: a plan of another sweep is refused (unless forced); returns the finished points */
function preparePoints(dir: string, plan: SweepPlan, force: boolean): Map<number, SweepPoint> {
  const folder = join(dir, POINTS_FOLDER);
  const planPath = join(folder, PLAN_FILE);
  if (existsSync(planPath) && !force) {
    const old = readSweepPlan(planPath);
    if (old.id !== plan.id) {
      const what = old.config_hash !== plan.config_hash ? `another configuration (config hash ${old.config_hash}, now ${plan.config_hash})` : `another sweep (${old.axes.map((a) => `${a.key}: ${a.values.length} values`).join(', ')}; target ${old.target_infidelity})`;
      throw new UserError(`${dir} holds an unfinished sweep of ${what}: it is resumed only with the same config and --vary; pass --force to start afresh or choose another --out`);
    }
  }
  mkdirSync(folder, { recursive: true });
  // announced, so that an interrupt can tell which points the folder keeps (cli/supervisor.ts)
  publishOutput({ kind: 'folder', dir: resolve(folder), shown: join(dir, POINTS_FOLDER) });
  removeStaleTemporaries(folder);
  writeFileAtomic(planPath, JSON.stringify(plan, null, 1) + '\n');
  const done = new Map<number, SweepPoint>();
  if (force) return done;
  for (let p = 0; p < plan.points; p++) {
    const file = pointFile(dir, p);
    const point = existsSync(file) ? readSweepPoint(file, plan.id) : null;
    if (point && point.index === p) done.set(p, point);
  }
  return done;
}

/** compute the pending points, serially or on worker threads; each is written at once */
async function computePoints(setup: SweepSetup, input: SweepInput, dir: string, pending: number[], opts: SweepOptions, progress: (p: number) => void): Promise<void> {
  const task = (p: number): PointTask => ({ input, axes: setup.axes, plan: setup.plan.id, index: p, values: pointValues(setup.plan, p), file: pointFile(dir, p) });
  // points of one design run one after another, so a worker reuses its design
  const order = [...pending].sort((a, b) => designKey(setup.configs[a]).localeCompare(designKey(setup.configs[b])) || a - b);
  const threads = Math.min(opts.threads ?? coreCount(), order.length);
  if (threads <= 1) {
    const cache: DesignCache = { last: null };
    for (const p of order) {
      await runAndWritePoint(task(p), cache);
      progress(p);
    }
    return;
  }
  // a worker writes its points itself; this thread announces each file when the worker reports it (the points
  // under way are the next `threads` of the dispatch order, so only those are looked at)
  const announced = new Set<number>();
  let from = 0; // every point before this position of the order is announced
  const announce = (upTo: number) => {
    for (let i = from; i < upTo; i++) {
      const p = order[i];
      if (!announced.has(p) && existsSync(pointFile(dir, p))) {
        announced.add(p);
        publishOutput({ kind: 'file', path: resolve(pointFile(dir, p)) });
      }
    }
    while (from < order.length && announced.has(order[from])) from++;
  };
  try {
    await runPool<PointTask, SweepPoint>(new URL('./sweep-worker.mjs', import.meta.url), order.map(task), threads, (done) => {
      announce(Math.min(order.length, done + threads));
      progress(order[done - 1]);
    });
  } catch (e) {
    throw new NumericalError(`sweep on ${threads} worker threads: ${e instanceof Error ? e.message : String(e)}`);
  }
}

/**
 * Run (or resume) a sweep into opts.dir: refuse a finished sweep there without --force and an unfinished one of
 * another plan; compute the missing points of the shard; write sweep.json and sweep.csv (io/run-folder.ts); for a
 * whole sweep also the figures and report.html.
 */
export async function runSweep(input: SweepInput, setup: SweepSetup, opts: SweepOptions): Promise<SweepResult> {
  const started = performance.now();
  const { plan } = setup;
  const folder = new RunFolder(opts.dir, { force: opts.force, produces: SWEEP_FILES, job: 'sweep', identity: configIdentity(setup.base) });
  let file: SweepFile;
  let computed = 0;
  try {
    const done = preparePoints(opts.dir, plan, opts.force);
    const pending = setup.indices.filter((p) => !done.has(p));
    const { work } = setup;
    const total = setup.indices.reduce((s, p) => s + work[p], 0);
    let finished = setup.indices.filter((p) => done.has(p)).reduce((s, p) => s + work[p], 0);
    let count = setup.indices.length - pending.length;
    opts.onProgress?.(finished / total, count, setup.indices.length);
    await computePoints(setup, input, opts.dir, pending, opts, (p) => {
      finished += work[p];
      computed++;
      opts.onProgress?.(finished / total, ++count, setup.indices.length);
    });
    const points = setup.indices.map((p) => readSweepPoint(pointFile(opts.dir, p), plan.id) ?? missingPoint(opts.dir, p));
    file = sweepFile(setup.base, plan, setup.shard, points, (performance.now() - started) / 1000);
    folder.write(SWEEP_FILES[0], toJson(file, 1));
    folder.write(SWEEP_FILES[1], sweepCsv(file));
    folder.commit();
  } catch (err) {
    folder.abort();
    throw err;
  }
  const files = SWEEP_FILES.map((f) => join(folder.dir, f));
  // the figures belong to the sweep just committed (which passed the --force check): they replace older ones
  if (!setup.shard) files.push(...(await renderSweep(opts.dir, file, opts, true)));
  return { file, files, computed };
}

function missingPoint(dir: string, p: number): never {
  throw new NumericalError(`point ${p} of the sweep in ${dir} was not written (${pointFile(dir, p)})`);
}

const DEFINITIONS: Record<string, string> = {
  subjects: 'ground: the ground state; worst: the worst tracked state (verify.states); thermal: the Boltzmann mean of the state fidelities; thermal_uhlmann: the Uhlmann fidelity of the evolved and the final Gibbs state; fermi_sea: the filled Fermi sea (verify.fermions)',
  answers: 'duration: the shortest swept protocol.duration from which on every longer swept duration keeps 1 − F ≤ target_infidelity; interpolated: where 1 − F crosses the target, log–log interpolated between that duration and the next shorter swept one; duration_in_budget: the same with the drive within budget.depth (the designed sequence’s depth; for a painted drive the painted potential’s) and, for the corrected drive, within budget.correction (its coupling out of the occupied states, verify.json cd_strength.max_leakage) and budget.coupling (the largest CD coupling of its realisation on the config\'s lattice section)',
  adiabatic_time: 'the answer (interpolated where possible) of the bare drive for the ground state: how slow the plain ramp must be',
  tolerances: 'with an error key of verify.errors swept (correction_scale, depth, timing, psf, noise_rms) or the atom number verify.interaction.atoms: per drive, subject and side of zero, tolerance is the largest swept |value| up to which every swept value on that side keeps 1 − F ≤ target_infidelity (0: only the error-free point does, so refine the swept values towards 0; null: not even that); interpolated: where 1 − F crosses the target, log–log interpolated between that value and the next larger swept one',
  drives: 'cd: the cubic counterdiabatic correction; bare: the ramp alone; further drives as verify computes them; with verify.interaction, condensate_cd, condensate_painted and condensate_bare are the condensate under the cubic correction, its own painted protocol and the ramp alone (one state: its nonlinear ground state; energies per atom)',
};

/** the sweep.json content of `points` (answers from the duration axis, when one is swept) */
export function sweepFile(base: Config, plan: SweepPlan, shard: SweepFile['shard'], points: SweepPoint[], seconds: number): SweepFile {
  const answers = sweepAnswers(plan, points);
  const adiabatic = answers.find((a) => a.drive === 'bare' && a.subject === 'ground' && a.other === null);
  return {
    format: SWEEP_FORMAT, name: base.name, plan, shard, points, answers, tolerances: sweepTolerances(plan, points),
    adiabatic_time: adiabatic ? (adiabatic.interpolated ?? adiabatic.duration) : null,
    definitions: DEFINITIONS, config: { ...base, meta: undefined }, seconds,
  };
}

/** infidelity of one subject of a drive (NaN when the drive lacks it) */
function subjectInfidelity(d: SweepDrive, subject: string): number {
  switch (subject) {
    case 'ground': return 1 - (d.states[0]?.fidelity ?? NaN);
    case 'worst': return 1 - d.min_fidelity;
    case 'thermal': return 1 - (d.thermal?.fidelity ?? NaN);
    case 'thermal_uhlmann': return 1 - (d.thermal?.uhlmann ?? NaN);
    default: return 1 - (d.fermions?.fidelity ?? NaN);
  }
}

export const ANSWER_SUBJECTS = ['ground', 'worst', 'thermal', 'thermal_uhlmann', 'fermi_sea'] as const;

/** the shortest duration of sorted (duration, infidelity, ok) from which on all pass, and the log–log crossing */
function shortest(rows: { t: number; f: number; ok: boolean }[], target: number): { duration: number | null; interpolated: number | null } {
  let k = rows.length;
  while (k > 0 && rows[k - 1].ok) k--;
  if (k === rows.length) return { duration: null, interpolated: null };
  if (k === 0) return { duration: rows[0].t, interpolated: null };
  const [a, b] = [rows[k - 1], rows[k]];
  return { duration: b.t, interpolated: a.t > 0 ? logCrossing(a.t, a.f, b.t, b.f, target) : null };
}

/** where 1 − F crosses the target between (x₁, f₁) and (x₂, f₂), x > 0, log–log interpolated (infidelities floored
 *  at INFIDELITY_FLOOR), or null when not finite */
function logCrossing(x1: number, f1: number, x2: number, f2: number, target: number): number | null {
  const [fa, fb] = [Math.max(f1, INFIDELITY_FLOOR), Math.max(f2, INFIDELITY_FLOOR)];
  const s = fa === fb ? 1 : (Math.log(target) - Math.log(fa)) / (Math.log(fb) - Math.log(fa));
  const x = Math.exp(Math.log(x1) + Math.min(1, Math.max(0, s)) * (Math.log(x2) - Math.log(x1)));
  return Number.isFinite(x) ? x : null;
}

/** per drive, subject and value of the other key: the shortest durations (see DEFINITIONS.answers) */
export function sweepAnswers(plan: SweepPlan, points: readonly SweepPoint[]): SweepAnswer[] {
  const axis = plan.axes.findIndex((a) => a.key === 'protocol.duration');
  if (axis < 0) return [];
  const other = plan.axes.length === 2 ? 1 - axis : -1;
  const ran = points.filter((p) => p.error === null);
  const drives = [...new Set(ran.flatMap((p) => p.drives.map((d) => d.drive)))];
  const others = other < 0 ? [null] : plan.axes[other].values;
  const answers: SweepAnswer[] = [];
  for (const o of others) {
    const group = ran.filter((p) => o === null || p.values[other] === o).sort((a, b) => a.values[axis] - b.values[axis]);
    for (const drive of drives) {
      for (const subject of ANSWER_SUBJECTS) {
        const rows = group.map((p) => {
          const d = p.drives.find((x) => x.drive === drive)!;
          return { p, f: subjectInfidelity(d, subject), depth: d.painted_depth ?? p.deepest, correction: d.correction_size, coupling: d.lattice_coupling };
        }).filter((r) => !Number.isNaN(r.f));
        if (rows.length === 0) continue;
        const plain = shortest(rows.map((r) => ({ t: r.p.values[axis], f: r.f, ok: r.f <= plan.target_infidelity })), plan.target_infidelity);
        const limit = rows[0].p.limit_depth;
        const limitCorrection = rows[0].p.limit_correction ?? null;
        const limitCoupling = rows[0].p.limit_coupling ?? null;
        const fits = (r: (typeof rows)[number]) => (limit === null || r.depth <= limit) && (limitCorrection === null || r.correction === undefined || r.correction <= limitCorrection) &&
          (limitCoupling === null || r.coupling === undefined || r.coupling <= limitCoupling);
        const inBudget = limit === null && limitCorrection === null && limitCoupling === null ? null : shortest(rows.map((r) => ({ t: r.p.values[axis], f: r.f, ok: r.f <= plan.target_infidelity && fits(r) })), plan.target_infidelity).duration;
        answers.push({ drive, subject, other: o, ...plain, duration_in_budget: inBudget });
      }
    }
  }
  return answers;
}

/** the error keys of verify.errors whose tolerance a sweep answers (sweepTolerances) */
export const ERROR_KEYS = ['verify.errors.correction_scale', 'verify.errors.depth', 'verify.errors.timing', 'verify.errors.psf', 'verify.errors.noise_rms'] as const;
/** the keys whose largest value within the target a sweep answers: the error keys, and the condensate's atom number
 *  (how many atoms a drive still carries; the degradation curve) */
export const TOLERANCE_KEYS = [...ERROR_KEYS, 'verify.interaction.atoms'] as const;

/** per drive, subject, side of zero and value of the other key: how large the swept error may be (DEFINITIONS.tolerances) */
export function sweepTolerances(plan: SweepPlan, points: readonly SweepPoint[]): SweepTolerance[] {
  const axis = plan.axes.findIndex((a) => (TOLERANCE_KEYS as readonly string[]).includes(a.key));
  if (axis < 0) return [];
  const key = plan.axes[axis].key;
  const other = plan.axes.length === 2 ? 1 - axis : -1;
  const ran = points.filter((p) => p.error === null);
  // the atom number changes only the condensate's drives
  const drives = [...new Set(ran.flatMap((p) => p.drives.map((d) => d.drive)))].filter((d) => key !== 'verify.interaction.atoms' || d.startsWith('condensate_'));
  const out: SweepTolerance[] = [];
  for (const o of other < 0 ? [null] : plan.axes[other].values) {
    const group = ran.filter((p) => o === null || p.values[other] === o);
    for (const drive of drives) {
      for (const subject of ANSWER_SUBJECTS) {
        const rows = group.map((p) => ({ x: p.values[axis], f: subjectInfidelity(p.drives.find((d) => d.drive === drive)!, subject) })).filter((r) => !Number.isNaN(r.f));
        for (const side of ['positive', 'negative'] as const) {
          const sideRows = rows.filter((r) => (side === 'positive' ? r.x >= 0 : r.x <= 0)).map((r) => ({ a: Math.abs(r.x), f: r.f })).sort((p, q) => p.a - q.a);
          if (!sideRows.some((r) => r.a > 0)) continue;
          let k = 0;
          while (k < sideRows.length && sideRows[k].f <= plan.target_infidelity) k++;
          const tolerance = k === 0 ? null : sideRows[k - 1].a;
          const interpolated = k > 0 && k < sideRows.length && sideRows[k - 1].a > 0
            ? logCrossing(sideRows[k - 1].a, sideRows[k - 1].f, sideRows[k].a, sideRows[k].f, plan.target_infidelity)
            : null;
          out.push({ key, drive, subject, other: o, side, tolerance, interpolated });
        }
      }
    }
  }
  return out;
}

/** the figures and report.html of a sweep folder (committed as the job `report`); the report modules load only
 *  here, so that the worker threads, which import this module for runPoint, do not load them */
async function renderSweep(dir: string, file: SweepFile, opts: Pick<SweepOptions, 'toolVersion' | 'figures'>, force: boolean): Promise<string[]> {
  const { renderReport } = await import('../report/html.ts');
  const { sweepFigures, sweepSummaryRows } = await import('../report/panels/sweep.ts');
  const figures = sweepFigures(file, opts.figures ?? 'paper');
  const [entry] = requireOneConfig(dir, [SWEEP_FILES[0]]);
  const configText = stringify(file.config);
  const html = renderReport({
    title: `isotrap sweep: ${file.name}`,
    summaryRows: sweepSummaryRows(file),
    figures,
    configText,
    provenance: { toolVersion: opts.toolVersion, configHash: file.plan.config_hash, date: new Date().toISOString(), runSeconds: Math.max(0, file.seconds) },
    warnings: [...new Set(file.points.flatMap((p) => (p.error ? [`point ${p.index} (${p.values.join(', ')}): ${p.error}`] : p.warnings)))],
  });
  const produces = [...figures.map((f) => `${f.id}.svg`), 'report.html'];
  return writeRun(dir, { force, produces, job: 'report', identity: { run: entry.run, configHash: entry.config_hash } }, (out) => {
    for (const f of figures) out.write(`${f.id}.svg`, f.svg);
    out.write('report.html', html);
  });
}

/** re-render the figures and report.html of a finished sweep folder from its sweep.json (for `isotrap report DIR`) */
export async function renderSweepFolder(dir: string, opts: Pick<SweepOptions, 'force' | 'toolVersion' | 'figures'>): Promise<string[]> {
  requireOneConfig(dir, [SWEEP_FILES[0]]);
  return renderSweep(dir, readSweepFile(join(dir, SWEEP_FILES[0])), opts, opts.force);
}

export interface MergeOptions {
  out: string;
  force: boolean;
  toolVersion: string;
  figures?: FigureSize;
}

/**
 * Join the shards of one sweep (folders of `isotrap sweep --shard i/n`, all of one plan) into one folder, as if the
 * sweep had run whole: every point exactly once.
 */
export async function mergeSweeps(dirs: readonly string[], opts: MergeOptions): Promise<SweepResult> {
  if (dirs.length === 0) throw new UserError('sweep merge needs the shard folders to join, e.g. isotrap sweep merge out-1of2 out-2of2 --out out');
  const files = dirs.map((d) => {
    if (!existsSync(join(d, SWEEP_FILES[0]))) throw new UserError(`${d} holds no finished sweep (no ${SWEEP_FILES[0]}): give the output folders of isotrap sweep --shard i/n that have finished`);
    requireOneConfig(d, [SWEEP_FILES[0]]);
    return { dir: d, file: readSweepFile(join(d, SWEEP_FILES[0])) };
  });
  const { plan } = files[0].file;
  const other = files.find((f) => f.file.plan.id !== plan.id);
  if (other) throw new UserError(`${other.dir} holds another sweep (plan ${other.file.plan.id}) than ${files[0].dir} (plan ${plan.id}): only shards of one sweep (same config, --vary and --target) can be merged`);
  const points = new Map<number, SweepPoint>();
  for (const { dir, file } of files) {
    for (const p of file.points) {
      if (points.has(p.index)) throw new UserError(`point ${p.index} is in more than one folder (again in ${dir}): give each shard once`);
      points.set(p.index, p);
    }
  }
  const missing = Array.from({ length: plan.points }, (_, p) => p).filter((p) => !points.has(p));
  if (missing.length > 0) throw new UserError(`the folders hold ${points.size} of the ${plan.points} points: missing ${missing.slice(0, 10).join(', ')}${missing.length > 10 ? ', …' : ''}; run the missing shards (--shard i/n) first`);
  const base = { ...(files[0].file.config as Config) };
  const sorted = [...points.values()].sort((a, b) => a.index - b.index);
  const file = sweepFile(base, plan, null, sorted, files.reduce((s, f) => s + f.file.seconds, 0));
  const identity = { run: `${new Date().toISOString()}-merge-${hash(dirs.join('\n')).slice(0, 8)}`, configHash: plan.config_hash };
  const written = writeRun(opts.out, { force: opts.force, produces: SWEEP_FILES, job: 'sweep', identity }, (out) => {
    out.write(SWEEP_FILES[0], toJson(file, 1));
    out.write(SWEEP_FILES[1], sweepCsv(file));
  });
  written.push(...(await renderSweep(opts.out, file, opts, true)));
  return { file, files: written, computed: 0 };
}
