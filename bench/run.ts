/**
 * Benchmarks (not tests): wall times against the targets in the issues, written to bench/results.json.
 * Run with `npm run bench`. Each case is run once to warm up the JIT and then timed REPEATS times (best kept).
 */
import { execFileSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { FLOW_PAIR } from '../src/flow/kdv.ts';
import { parseConfig } from '../src/io/config.ts';
import { runDesign } from '../src/jobs/design.ts';
import { twoSolitonFromSech2 } from '../src/flow/solitons.ts';
import { makeGrid } from '../src/spectral/grid.ts';
import { tmpdir, loadavg } from 'node:os';
import { join } from 'node:path';
import { encodeNpy } from '../src/io/npy.ts';
import { runCheckParallel } from '../src/jobs/check.ts';

/** timed repetitions per case (best of) */
const REPEATS = 5;

interface CaseResult {
  [key: string]: unknown;
}

/** flow tolerance of the design case: the loosest decade that meets the 1e-7 requirement on this case (measured) */
const DESIGN_TOLERANCE = 1e-8;
/** the numpy peer (ETDRK4, fixed step 1e-4: max error 4e-8) run in this process's session (shared/peers/README.md) */
const PEER_DIR = '/work/shared/peers';

/** wall seconds of the numpy ETDRK4 peer, or a note why it was skipped */
function peerSeconds(): { seconds: number | null; note: string } {
  const code = 'from kdv_etdrk4 import etdrk4; print(etdrk4(1024, 60.0, 0.5, 1e-4)[0])';
  try {
    const times: number[] = [];
    for (let r = 0; r < 3; r++) {
      const out = execFileSync('python3', ['-c', code], { cwd: PEER_DIR, env: { ...process.env, OPENBLAS_NUM_THREADS: '1' }, encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'] });
      times.push(Number(out.trim()));
    }
    return { seconds: Math.min(...times), note: 'python3 + numpy kdv_etdrk4.py: its own timing of the step loop (set-up and start-up excluded), best of 3, OPENBLAS_NUM_THREADS=1' };
  } catch (e) {
    return { seconds: null, note: `peer skipped: python3 with numpy or ${PEER_DIR} not available (${(e as Error).message.split('\n')[0]})` };
  }
}

/** the whole design job (flow, bound states along the sequence, invariants, wells, budgets) of the two-soliton split */
function flowCase(): CaseResult {
  const text = `name: bench-split
units: { system: natural }
grid: { length: 60, points: 1024 }
initial: { kind: sech2, depth: 6, width: 1, center: 0 }
flow: { dispersion: quantum, lambda_end: 0.5, frames: 11, tolerance: ${DESIGN_TOLERANCE} }
`;
  const config = parseConfig(text, 'bench-split.yaml', tmpdir());
  runDesign(config); // warm-up
  const peer = peerSeconds();
  let best = Infinity;
  let result = runDesign(config);
  for (let r = 0; r < REPEATS; r++) {
    const t0 = performance.now();
    const run = runDesign(config);
    const wall = (performance.now() - t0) / 1000;
    if (wall < best) [best, result] = [wall, run];
  }
  const { run, ctx, spectrum, drift } = result;
  let err = 0;
  run.frames.forEach((f, i) => ctx.grid.x.forEach((x, j) => (err = Math.max(err, Math.abs(f[j] - twoSolitonFromSech2(x, run.lambdas[i]))))));
  return {
    case: 'design job: two-soliton split of -6 sech^2, N = 1024, L = 60, to tau = 0.5, 11 frames (error against the Drazin & Johnson closed form over all frames)',
    method: `${FLOW_PAIR.name} embedded exponential Runge-Kutta pair (${FLOW_PAIR.source}), 2/3 dealiasing; bound states by Sturm counts and Newton on the determinant + Richardson`,
    tolerance: DESIGN_TOLERANCE,
    max_error: err,
    requirement_max_error: 1e-7,
    invariant_drift: drift.max,
    spectral_drift: spectrum.maxDrift,
    design_wall_seconds: best,
    flow_wall_seconds: run.stats.wallSeconds,
    peer_wall_seconds: peer.seconds,
    peer_note: peer.note,
    ratio_design_to_peer: peer.seconds === null ? null : best / peer.seconds,
    target_ratio: 1 / 3,
    accepted_steps: run.stats.accepted,
    rejected_steps: run.stats.rejected,
    rhs_evaluations: run.stats.nonlinearEvaluations,
    coefficient_sets: run.stats.coefficientSets,
    dense_output_mbytes: run.dense.bytes / 2 ** 20,
    load_average_1min: loadavg()[0],
  };
}

/** wall seconds of the numpy verification peer (dense eigh, RK4 interaction picture, cd and bare), or a note */
function verifyPeerSeconds(): { seconds: number | null; note: string } {
  try {
    const times: number[] = [];
    for (let r = 0; r < 2; r++) {
      const out = execFileSync('python3', ['tdse_iprk4.py', 'peer'], { cwd: PEER_DIR, env: { ...process.env, OPENBLAS_NUM_THREADS: '1' }, encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'] });
      const m = /:\s*([0-9.]+)\s*s/.exec(out);
      if (m) times.push(Number(m[1]));
    }
    if (times.length === 0) throw new Error('no time in its output');
    return { seconds: Math.min(...times), note: 'python3 + numpy tdse_iprk4.py peer: its own timing (dense eigh, cd 4000 and bare 400 RK4 steps, N = 512, 8 states), best of 2, OPENBLAS_NUM_THREADS=1' };
  } catch (e) {
    return { seconds: null, note: `peer skipped: python3 with numpy or ${PEER_DIR} not available (${(e as Error).message.split('\n')[0]})` };
  }
}

/** the verify job (eigenstates, cd and bare drives on worker threads, fidelities, correction size) of the split of
 *  −6 sech² as the numpy peer does it, through the compiled library so that the worker threads load dist/ */
async function verifyCase(control: 'global' | 'local', tolerance: number, peer: { seconds: number | null; note: string }): Promise<CaseResult> {
  const lib = (await import(new URL('../dist/index.js', import.meta.url).href)) as typeof import('../src/index.ts');
  const text = `name: bench-verify
units: { system: natural }
grid: { length: 60, points: 512 }
initial: { kind: sech2, depth: 6, width: 1, center: 0 }
flow: { dispersion: quantum, lambda_end: 0.5, frames: 11 }
protocol: { duration: 2.0, ramp: sin2 }
verify: { states: 8, tolerance: ${tolerance}, step_control: ${control} }
`;
  const config = lib.parseConfig(text, 'bench-verify.yaml', tmpdir());
  const design = lib.design(config);
  await lib.verify(config, { design, traceSamples: 0 }); // warm-up
  let best = Infinity;
  let result = await lib.verify(config, { design, traceSamples: 0 });
  for (let r = 0; r < 3; r++) {
    const t0 = performance.now();
    const v = await lib.verify(config, { design, traceSamples: 0 });
    const wall = (performance.now() - t0) / 1000;
    if (wall < best) [best, result] = [wall, v];
  }
  const n = result.natural;
  const cd = n.drives.find((d) => d.drive === 'cd')!;
  const bare = n.drives.find((d) => d.drive === 'bare')!;
  return {
    case: `verify job: split of -6 sech^2, N = 512, L = 60, lambda_end = 0.5, T = 2, sin2, 8 states, cd and bare drives (no traces, as the peer), verify.step_control: ${control}, verify.tolerance: ${tolerance}`,
    method: `${cd.stats.scheme} (${cd.stats.errorEstimator}), states in groups of 4 on ${n.timings.threads} worker thread(s); eigenstates: ${n.eigen.method}`,
    tolerance_infidelity: tolerance,
    worst_infidelity_cd: 1 - cd.minFidelity,
    wall_seconds: best,
    peer_wall_seconds: peer.seconds,
    peer_note: peer.note,
    ratio_verify_to_peer: peer.seconds === null ? null : best / peer.seconds,
    target_ratio: 1 / 3,
    eigen_seconds: n.timings.eigenMs / 1000,
    cd_steps: cd.stats.steps,
    cd_levels: cd.stats.levels,
    bare_steps: bare.stats.steps,
    operator_applications: cd.stats.matvecs + bare.stats.matvecs,
    peak_rss_mbytes: process.resourceUsage().maxRSS / 1024,
    load_average_1min: loadavg()[0],
  };
}

/** budget of the one-pass control whose achieved infidelity is the peer's accuracy, amplitude error² ≈ 1e-8
 *  (shared/peers/README.md; measured 5.6e-9: the one-pass budget is a bound, about 10⁴ above what it achieves) */
const ONE_PASS_MATCHED_TOLERANCE = 1e-4;

/** the verify case with the default doubling ladder, with the one-pass control at the same budget and at the budget
 *  that reaches the peer's accuracy, against the same peer timing */
async function verifyCases(): Promise<CaseResult[]> {
  const peer = verifyPeerSeconds();
  return [await verifyCase('global', 1e-7, peer), await verifyCase('local', 1e-7, peer), await verifyCase('local', ONE_PASS_MATCHED_TOLERANCE, peer)];
}

/** `check` (flow fit per interval on worker threads, spectra, repair) of the closed-form split, 41 frames × 1024 points */
async function checkCase(): Promise<CaseResult> {
  const grid = makeGrid(60, 1024);
  const taus = Array.from({ length: 41 }, (_, i) => (0.5 * i) / 40);
  const flat = new Float64Array(taus.length * grid.n);
  taus.forEach((t, k) => grid.x.forEach((x, j) => (flat[k * grid.n + j] = twoSolitonFromSech2(x, t))));
  const dir = mkdtempSync(join(tmpdir(), 'isotrap-bench-check-'));
  writeFileSync(join(dir, 'seq.npy'), encodeNpy(flat, [taus.length, grid.n]));
  writeFileSync(join(dir, 'seq.json'), JSON.stringify({ x: Array.from(grid.x), lambda: taus, length_unit: 'ℓ', energy_unit: 'E₀' }));
  const t0 = performance.now();
  const r = await runCheckParallel({ input: join(dir, 'seq.npy') });
  const wall = (performance.now() - t0) / 1000;
  return {
    case: 'check of the closed-form split of -6 sech^2, 41 frames over tau in [0, 0.5], N = 1024, L = 60',
    method: 'KdV flow fit per interval on worker threads (all cores), spectra of 9 frames, repair from the first frame',
    admissible: r.admissible,
    max_residual: r.report.fit.max_residual,
    max_dtau_error: Math.max(...r.report.intervals.map((it) => Math.abs(it.dtau - 0.0125))),
    wall_seconds: wall,
    target_wall_seconds: 10,
    load_average_1min: loadavg()[0],
  };
}

/** start-up of the compiled command line (dist/, built by `npm run bench` first): `isotrap --version` */
function startupCase(): CaseResult {
  const times: number[] = [];
  let out = '';
  for (let i = 0; i <= REPEATS; i++) {
    const t0 = performance.now();
    out = execFileSync(process.execPath, ['bin/isotrap.js', '--version'], { encoding: 'utf8' }).trim();
    if (i > 0) times.push((performance.now() - t0) / 1000);
  }
  return {
    case: 'isotrap --version (node bin/isotrap.js, compiled JavaScript)',
    version: out,
    wall_seconds: Math.min(...times),
    target_wall_seconds: 0.3,
    load_average_1min: loadavg()[0],
  };
}

/** a 25-point duration sweep of the default scenario through the compiled command line, all cores (minutes: skipped
 *  with ISOTRAP_BENCH_QUICK=1) */
function sweepCase(): CaseResult {
  const dir = mkdtempSync(join(tmpdir(), 'isotrap-bench-sweep-'));
  // the drives of the sweep target: cd and bare (the default scenario's painted drive left out)
  const config = join(dir, 'default.yaml');
  writeFileSync(config, readFileSync('configs/default.yaml', 'utf8').replace(', painted: [ground]', ''));
  const t0 = performance.now();
  execFileSync(process.execPath, ['bin/isotrap.js', 'sweep', config, '--vary', 'protocol.duration=0.2:10:log:25', '--out', join(dir, 'sweep'), '--quiet'], { stdio: ['ignore', 'ignore', 'inherit'] });
  return {
    case: 'isotrap sweep of configs/default.yaml without its painted drive, --vary protocol.duration=0.2:10:log:25 (25 verify runs of cd and bare, all cores)',
    wall_seconds: (performance.now() - t0) / 1000,
    target_wall_seconds: 180,
    load_average_1min: loadavg()[0],
  };
}

/** a ⁴⁰K thermal ensemble of 280 states (its Boltzmann tail beyond < 1e-6) through the compiled command line (illustrative scenario; about two minutes:
 *  skipped with ISOTRAP_BENCH_QUICK=1) */
function thermalCase(): CaseResult {
  const dir = mkdtempSync(join(tmpdir(), 'isotrap-bench-k40-'));
  const config = join(dir, 'k40.yaml');
  writeFileSync(config, `name: k40-thermal
units: { system: lab, species: K40, energy: uK }
grid: { length: 80, points: 2048 }
initial: { kind: wells, wells: [{ shape: gaussian, depth: 0.15, width: 2, center: 0 }] }
flow: { lambda_end: 0.002, frames: 5 }
protocol: { duration: 1.0, ramp: sin2 }
verify: { temperature: 50, states: 280 }
`);
  const t0 = performance.now();
  execFileSync(process.execPath, ['bin/isotrap.js', 'verify', config, '--out', join(dir, 'out'), '--quiet'], { stdio: ['ignore', 'ignore', 'inherit'] });
  const wall = (performance.now() - t0) / 1000;
  const v = JSON.parse(readFileSync(join(dir, 'out', 'verify.json'), 'utf8')) as { thermal?: { uhlmann_cd?: number } };
  return {
    case: 'isotrap verify of a 40K Gaussian well (0.15 uK, sigma 2 um, 2048 points, T = 50 nK), 280 states, cd and bare, all cores',
    wall_seconds: wall,
    target_wall_seconds: 120,
    thermal: v.thermal ?? null,
    load_average_1min: loadavg()[0],
  };
}

const quick = process.env.ISOTRAP_BENCH_QUICK === '1';
const results = { date: new Date().toISOString(), node: process.version, cases: [startupCase(), flowCase(), ...(await verifyCases()), await checkCase(), ...(quick ? [] : [sweepCase(), thermalCase()])] };
mkdirSync('bench', { recursive: true });
writeFileSync('bench/results.json', JSON.stringify(results, null, 2) + '\n');
console.log(JSON.stringify(results, null, 2));
