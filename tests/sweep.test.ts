import { spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { parseConfig, parseYaml } from '../src/io/config.ts';
import { parseLatticeConfig } from '../src/io/config-lattice.ts';
import { largestLatticeCoupling } from '../src/jobs/lattice.ts';
import { runDesign } from '../src/jobs/design.ts';
import { runVerify } from '../src/jobs/verify.ts';
import { mergeSweeps, planSweep, runSweep, sweepAnswers, sweepTolerances, type SweepFile, type SweepInput } from '../src/jobs/sweep.ts';
import type { SweepPoint } from '../src/io/formats/sweep.ts';
import { readSweepFile } from '../src/io/formats/sweep.ts';
import { userErrorOf } from './user-error.ts';

const BIN = resolve('bin/isotrap.js');

// u(ξ, 0) = −6 sech² ξ: Pöschl–Teller with N = 2, bound states −4 and −1 (physics.md §4), splitting into two
// solitons; a small grid and a short flow keep each point at about a second.
const CONFIG = `name: sweep-small
units: { system: natural }
grid: { length: 16, points: 128 }
initial: { kind: sech2, depth: 6, width: 1, center: 0 }
flow: { lambda_end: 0.1, frames: 5 }
protocol: { duration: 1.0, ramp: sin2 }
verify: { states: 2, temperature: 0.5, fermions: 2 }
`;
const DURATIONS = [0.25, 2, 16];
const VARY = [`protocol.duration=${DURATIONS.join(',')}`];

function input(text = CONFIG): SweepInput {
  return { raw: parseYaml(text, 'sweep.yaml'), source: 'sweep.yaml', baseDir: tmpdir() };
}

function fresh(): string {
  return mkdtempSync(join(tmpdir(), 'isotrap-sweep-'));
}

/** the sweep's data without its timings (the only part that differs between runs) */
function data(f: SweepFile): unknown {
  return { ...f, seconds: 0, points: f.points.map((p) => ({ ...p, seconds: 0 })) };
}

describe('isotrap sweep', () => {
  let whole: { dir: string; file: SweepFile };
  beforeAll(async () => {
    const dir = join(fresh(), 'whole');
    const r = await runSweep(input(), planSweep(input(), { vary: VARY }), { dir, force: false, threads: 1, toolVersion: 'test' });
    whole = { dir, file: r.file };
  }, 60_000);

  it('a sweep point equals a single verify of the same config, to the last digit', async () => {
    // common practice: a sweep repeats `verify` at each point, so nothing may differ from running it alone
    const config = parseConfig(CONFIG.replace('duration: 1.0', `duration: ${DURATIONS[1]}`), 'single.yaml', tmpdir());
    const v = (await runVerify(config, runDesign(config))).file;
    const p = whole.file.points[1];
    expect(p.values).toEqual([DURATIONS[1]]);
    const cd = p.drives.find((d) => d.drive === 'cd')!;
    const bare = p.drives.find((d) => d.drive === 'bare')!;
    v.states.forEach((s, i) => {
      expect(cd.states[i].fidelity).toBe(s.fidelity_cd);
      expect(bare.states[i].fidelity).toBe(s.fidelity_bare);
      expect(cd.states[i].excess).toBe(s.excess_cd);
      expect(bare.states[i].excess).toBe(s.excess_bare);
      expect(cd.states[i].energy).toBe(s.energy);
    });
    expect(cd.thermal?.uhlmann).toBe(v.thermal?.uhlmann_cd);
    expect(bare.thermal?.fidelity).toBe(v.thermal?.fidelity_bare);
    expect(cd.fermions?.fidelity).toBe(v.fermions?.fidelity_cd);
    // the table carries the same numbers (shortest round-trip text of each double)
    const csv = readFileSync(join(whole.dir, 'sweep.csv'), 'utf8').trim().split('\n');
    expect(csv[0]).toBe('point,protocol.duration (t₀),drive,subject,state,energy (E₀),fidelity,infidelity,excess (E₀)');
    const row = csv.find((l) => l.startsWith('1,2,bare,state,0,'))!.split(',');
    expect(Number(row[6])).toBe(v.states[0].fidelity_bare);
  });

  it('the bare infidelity falls towards 0 as the duration grows while the corrected one stays at the time-stepping budget', () => {
    // adiabatic theorem (Born & Fock, Z. Phys. 51, 165, 1928): the slower the ramp, the closer the bare drive keeps
    // the eigenstate; the exact cubic correction keeps it at any speed, to the infidelity budget verify.tolerance
    // (default 1e-8) of the time stepping (physics.md §1–§3)
    const ground = (drive: string) => whole.file.points.map((p) => 1 - p.drives.find((d) => d.drive === drive)!.states[0].fidelity);
    const bare = ground('bare');
    expect(bare[0]).toBeGreaterThan(0.1);
    expect(bare[2]).toBeLessThan(1e-5);
    expect(bare[2]).toBeLessThan(bare[1]);
    expect(bare[1]).toBeLessThan(bare[0]);
    for (const f of ground('cd')) expect(f).toBeLessThan(1e-8);
    // the answers: the corrected drive meets the target at the shortest duration, the bare one only later
    const answer = (drive: string) => whole.file.answers.find((a) => a.drive === drive && a.subject === 'ground')!;
    expect(answer('cd').duration).toBe(DURATIONS[0]);
    expect(answer('bare').duration).toBe(DURATIONS[2]);
    expect(whole.file.adiabatic_time).toBeGreaterThan(DURATIONS[1]);
    expect(whole.file.adiabatic_time).toBeLessThanOrEqual(DURATIONS[2]);
    expect(existsSync(join(whole.dir, 'report.html'))).toBe(true);
    expect(readFileSync(join(whole.dir, 'sweep-fidelity.svg'), 'utf8')).toContain('adiabatic time');
  });

  it('two shards merged equal the unsharded sweep', async () => {
    // common practice: the points are independent, so splitting them over jobs or threads changes nothing
    const root = fresh();
    const shards = [1, 2].map((i) => join(root, `s${i}`));
    for (const [i, dir] of shards.entries()) {
      const setup = planSweep(input(), { vary: VARY, shard: { index: i + 1, count: 2 } });
      expect(setup.indices).toEqual(DURATIONS.map((_, p) => p).filter((p) => p % 2 === i));
      await runSweep(input(), setup, { dir, force: false, threads: 1, toolVersion: 'test' });
    }
    const merged = join(root, 'merged');
    await mergeSweeps(shards, { out: merged, force: false, toolVersion: 'test' });
    expect(readFileSync(join(merged, 'sweep.csv'), 'utf8')).toBe(readFileSync(join(whole.dir, 'sweep.csv'), 'utf8'));
    expect(data(readSweepFile(join(merged, 'sweep.json')))).toEqual(data(readSweepFile(join(whole.dir, 'sweep.json'))));
    await expect(mergeSweeps([shards[0]], { out: join(root, 'half'), force: false, toolVersion: 'test' })).rejects.toThrow(/hold 2 of the 3 points: missing 1/);
  });

  it('a sweep on two threads interrupted by SIGINT keeps its finished points and resumes to the table of one thread', async () => {
    // common practice (POSIX shells): exit 128 + 2 on SIGINT; the points written before it are kept
    const dir = fresh();
    writeFileSync(join(dir, 'c.yaml'), CONFIG);
    const args = [BIN, 'sweep', 'c.yaml', '--vary', VARY[0], '--out', 'out', '--threads', '2', '--quiet'];
    const child = spawn(process.execPath, args, { cwd: dir, stdio: ['ignore', 'ignore', 'pipe'] });
    let stderr = '';
    child.stderr.on('data', (c: Buffer) => (stderr += c.toString()));
    const exited = new Promise<number | null>((done) => child.on('exit', (code) => done(code)));
    const points = join(dir, 'out', 'points');
    const written = () => (existsSync(points) ? readdirSync(points).filter((f) => /^p\d+\.json$/.test(f)) : []);
    for (let i = 0; i < 600 && written().length === 0; i++) await new Promise((r) => setTimeout(r, 50));
    child.kill('SIGINT');
    expect(await exited).toBe(130);
    const kept = written();
    expect(kept.length).toBeGreaterThan(0);
    // a point a worker has just written may not have been announced yet: the message names the folder at least
    expect(stderr).toMatch(/interrupted by SIGINT during sweep: out\/points holds part of the sweep \(plan\.json/);
    expect(existsSync(join(dir, 'out', 'sweep.json'))).toBe(false);
    // another sweep is not mixed into the unfinished one
    const other = spawnSync(process.execPath, [BIN, 'sweep', 'c.yaml', '--vary', 'protocol.duration=0.5,1', '--out', 'out', '--quiet'], { cwd: dir, encoding: 'utf8' });
    expect(other.status).toBe(2);
    expect(other.stderr).toMatch(/out holds an unfinished sweep of another sweep \(protocol\.duration: 3 values; target 0\.001\): it is resumed only with the same config and --vary/);
    const again = spawnSync(process.execPath, args, { cwd: dir, encoding: 'utf8' });
    expect(again.status, again.stderr).toBe(0);
    const counts = /points +3; (\d) computed now, (\d) from an earlier run/.exec(again.stdout);
    expect(Number(counts?.[2])).toBe(kept.length);
    expect(Number(counts?.[1])).toBe(3 - kept.length);
    expect(readFileSync(join(dir, 'out', 'sweep.csv'), 'utf8')).toBe(readFileSync(join(whole.dir, 'sweep.csv'), 'utf8'));
    expect(data(readSweepFile(join(dir, 'out', 'sweep.json')))).toEqual(data(whole.file));
    // a finished sweep is not overwritten without --force
    const finished = spawnSync(process.execPath, args, { cwd: dir, encoding: 'utf8' });
    expect(finished.status).toBe(2);
    expect(finished.stderr).toMatch(/out\/sweep\.json, out\/sweep\.csv already exist: pass --force/);
  }, 60_000);

  it('refuses a bad key or SPEC naming the key, the value and what is allowed', () => {
    const plan = (vary: string) => userErrorOf(() => planSweep(input(), { vary: [vary] }));
    expect(plan('protocol.durr=1,2')).toMatch(/protocol\.durr = 1 is not allowed: unknown key; allowed keys in protocol are duration, ramp/);
    expect(plan('protocol.ramp=1,2')).toMatch(/--vary protocol\.ramp is not allowed: the key holds "sin2", not a number/);
    expect(plan('protocol.duration=1:2:lin')).toMatch(/protocol\.duration=1:2:lin is not allowed: .*a:b:lin:n/);
    expect(plan('protocol.duration=0:2:log:3')).toMatch(/log spacing needs a > 0 and b > 0/);
    expect(plan('verify.states=0,2')).toMatch(/verify\.states = 0 is not allowed: must be an integer from 1 to 1000/);
    expect(plan('grid.points=100')).toMatch(/grid\.points = 100 is not allowed: must be a power of two/);
  });

  it('the command line refuses a bad --vary with exit 2 and writes nothing', () => {
    const dir = fresh();
    writeFileSync(join(dir, 'c.yaml'), CONFIG);
    const r = spawnSync(process.execPath, [BIN, 'sweep', 'c.yaml', '--vary', 'initial.depth=-1,2', '--out', 'out', '--quiet'], { cwd: dir, encoding: 'utf8' });
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/initial\.depth = -1 is not allowed: must be a number > 0/);
    expect(existsSync(join(dir, 'out'))).toBe(false);
  });
});

describe('sweep plan and answers (no computation)', () => {
  it('spaces the values of a SPEC and reads the shortest duration off the points', () => {
    const setup = planSweep(input(), { vary: ['protocol.duration=1:100:log:3', 'verify.temperature=0.5:1.5:lin:3'], target: 1e-4 });
    const [t, T] = setup.plan.axes;
    // closed form: evenly spaced logarithms / values
    expect(t.values[0]).toBe(1);
    expect(t.values[1]).toBeCloseTo(10, 12);
    expect(t.values[2]).toBe(100);
    expect(T.values).toEqual([0.5, 1, 1.5]);
    expect(t.unit).toBe('t₀');
    expect(T.unit).toBe('E₀');
    expect(setup.plan.points).toBe(9);
    expect(setup.configs[5].protocol?.duration).toBe(t.values[1]);
    expect(setup.configs[5].verify?.temperature).toBe(1.5);
    // a drive whose infidelity falls as T⁻² (the adiabatic scaling of a smooth ramp, common practice): the
    // log–log crossing of the target is exact, T* = T₁ (f₁/target)^(1/2)
    const point = (index: number, T0: number, f: number): SweepPoint => ({
      format: 'isotrap-sweep-point/1', plan: setup.plan.id, index, values: [T0], error: null, deepest: 1, limit_depth: null, accepted: true, warnings: [], seconds: 0,
      drives: [{ drive: 'bare', min_fidelity: 1 - f, states: [{ index: 0, energy: -1, fidelity: 1 - f, excess: 0 }], thermal: null, fermions: null }],
    });
    const plan = { ...setup.plan, axes: [t], points: 3 };
    const f = (T0: number) => 3e-2 / T0 ** 2;
    const [a] = sweepAnswers(plan, t.values.map((T0, i) => point(i, T0, f(T0))));
    expect(a.duration).toBe(100);
    expect(a.interpolated).toBeCloseTo(10 * Math.sqrt(f(t.values[1]) / 1e-4), 10);
    // a painted drive is within budget.depth only where its own painted depth is (common practice: the laser power
    // limits the deepest potential painted); its painted depth falls as T⁻² like V_loc ∝ λ̇², λ̈
    const painted = (index: number, T0: number, depth: number): SweepPoint => ({
      ...point(index, T0, 1e-5), limit_depth: 5,
      drives: [{ drive: 'painted_ground', min_fidelity: 1 - 1e-5, painted_depth: depth, states: [{ index: 0, energy: -1, fidelity: 1 - 1e-5, excess: 0 }], thermal: null, fermions: null }],
    });
    // every duration meets the target; the painted depth 1 + 400/T² is 401, 5, 1.04 at T = 1, 10, 100
    const [b] = sweepAnswers(plan, t.values.map((T0, i) => painted(i, T0, 1 + 400 / T0 ** 2)));
    expect(b.duration).toBe(1);
    expect(b.duration_in_budget).toBeCloseTo(10, 12);
    const [c] = sweepAnswers(plan, t.values.map((T0, i) => painted(i, T0, 2)));
    expect(c.duration_in_budget).toBe(1);
    // budget.correction limits the corrected drive's coupling out of the occupied states, which grows as λ̇ ∝ 1/T
    // (the correction is λ̇A): 30/T is 30, 3, 0.3 at T = 1, 10, 100, so a limit of 5 is met from T = 10
    const corrected = (index: number, T0: number): SweepPoint => ({
      ...point(index, T0, 1e-9), limit_correction: 5,
      drives: [{ drive: 'cd', min_fidelity: 1 - 1e-9, correction_size: 30 / T0, states: [{ index: 0, energy: -1, fidelity: 1 - 1e-9, excess: 0 }], thermal: null, fermions: null }],
    });
    const [d] = sweepAnswers(plan, t.values.map((T0, i) => corrected(i, T0)));
    expect(d.duration).toBe(1);
    expect(d.duration_in_budget).toBeCloseTo(10, 12);
    // budget.coupling limits the lattice realisation's largest CD coupling, also ∝ λ̇ ∝ 1/T: 800/T is 800, 80, 8
    const onLattice = (index: number, T0: number): SweepPoint => ({
      ...point(index, T0, 1e-9), limit_coupling: 100,
      drives: [{ drive: 'cd', min_fidelity: 1 - 1e-9, lattice_coupling: 800 / T0, states: [{ index: 0, energy: -1, fidelity: 1 - 1e-9, excess: 0 }], thermal: null, fermions: null }],
    });
    const [g] = sweepAnswers(plan, t.values.map((T0, i) => onLattice(i, T0)));
    expect(g.duration_in_budget).toBeCloseTo(10, 12);
  });

  it('the lattice coupling budget.coupling compares: 4 max|λ̇|/d³ where the potential vanishes, 8λ_end/(T d³) for a sin² ramp (physics.md §6: the Peierls part b = λ̇(4/d³ + 3ū/d) of the nearest-neighbour bond)', () => {
    const text = `name: lattice-budget
units: { system: natural }
grid: { length: 24, points: 256 }
initial: { kind: sech2, depth: 2, width: 1, center: 0 }
flow: { lambda_end: 0.05, frames: 5 }
protocol: { duration: 2, ramp: sin2 }
lattice: { spacing: 0.25, sites_per_width: [] }
`;
    const config = parseLatticeConfig(text, 'lattice.yaml', tmpdir());
    const h = 0.25;
    // the sech² tail at the box edge (|ξ| = 12) is 2·4e^{−24} ≈ 3e-10: ū = 0 there to that accuracy
    expect(Math.abs(largestLatticeCoupling(config) / ((8 * 0.05) / (2 * h ** 3)) - 1)).toBeLessThan(1e-8);
  }, 60_000);

  it('reads the tolerance on an error key off the points: log–log crossings exact for an infidelity ∝ ε² (first-order perturbation theory)', () => {
    const setup = planSweep(input(), { vary: ['verify.errors.correction_scale=-0.04,-0.02,-0.01,0,0.01,0.02,0.04'], target: 8e-3 });
    const [e] = setup.plan.axes;
    // 1 − F = c ε² with c = 19 for ε > 0 and 40 for ε < 0: ε* = √(target/c)
    const f = (x: number) => (x >= 0 ? 19 : 40) * x * x;
    const points = e.values.map((x, i): SweepPoint => ({
      format: 'isotrap-sweep-point/1', plan: setup.plan.id, index: i, values: [x], error: null, deepest: 1, limit_depth: null, accepted: true, warnings: [], seconds: 0,
      drives: [{ drive: 'cd', min_fidelity: 1 - f(x), states: [{ index: 0, energy: -1, fidelity: 1 - f(x), excess: 0 }], thermal: null, fermions: null }],
    }));
    const tol = sweepTolerances(setup.plan, points).filter((t) => t.subject === 'ground');
    const pos = tol.find((t) => t.side === 'positive')!;
    const neg = tol.find((t) => t.side === 'negative')!;
    expect(pos.key).toBe('verify.errors.correction_scale');
    expect(pos.tolerance).toBe(0.02);
    expect(pos.interpolated).toBeCloseTo(Math.sqrt(8e-3 / 19), 12);
    expect(neg.tolerance).toBe(0.01);
    expect(neg.interpolated).toBeCloseTo(Math.sqrt(8e-3 / 40), 12);
    // a duration sweep has no error key: no tolerances
    expect(sweepTolerances(planSweep(input(), { vary: VARY }).plan, [])).toEqual([]);
  });
});
