import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { stringify } from 'yaml';
import { complexFromReal } from '../src/linalg/complex.ts';
import { parseConfig, parseYaml } from '../src/io/config.ts';
import { runDesign } from '../src/jobs/design.ts';
import { runVerify } from '../src/jobs/verify.ts';
import { runPipeline } from '../src/jobs/run.ts';
import { EXPORT_JSON, runExport, writeExportOutputs } from '../src/jobs/export.ts';
import { readExportFile } from '../src/io/formats/export.ts';
import { decodeNpy } from '../src/io/npy.ts';
import { makeContext } from '../src/jobs/context.ts';
import { assertVerifyAffordable } from '../src/io/cost.ts';
import { planSweep, runSweep } from '../src/jobs/sweep.ts';
import { twoSolitonFromSech2 } from '../src/flow/solitons.ts';
import { makeRamp } from '../src/protocol/ramp.ts';
import { CondensateNotHeldError, condensateGrounds, driveCondensate, withMeanField } from '../src/quantum/condensate.ts';
import { gpeEnergy, gpeEvolve, gpeGroundState } from '../src/quantum/gpe.ts';
import { bareTerms } from '../src/quantum/hamiltonian.ts';
import { paintedDrive, groundStateField } from '../src/quantum/painted.ts';
import { Propagator } from '../src/quantum/propagator.ts';
import { condensateFigure } from '../src/report/panels/verify.ts';
import { makeGrid, type Grid } from '../src/spectral/grid.ts';
import { guideCoupling } from '../src/units/interaction.ts';
import { HBAR } from '../src/units/constants.ts';

const BIN = resolve('bin/isotrap.js');

// Natural units (physics.md §3, §10): i∂_sψ = [k² + u + g|ψ|²]ψ with ∫|ψ|² dξ = 1; the propagator works on unit
// vectors ψ_j = ψ(ξ_j)√dξ, so its mean-field coefficient is g/dξ (scheme.ts meanField).

/** a unit vector (Σ|ψ_j|² = 1) from ψ with ∫ψ² dξ = 1 */
const unitVector = (grid: Grid, psi: Float64Array) => complexFromReal(psi.map((v) => v * Math.sqrt(grid.dx)));

describe('the production propagator with the mean-field term', () => {
  it('keeps the attractive bright soliton stationary to 1e-8 (Zakharov & Shabat, Sov. Phys. JETP 34, 62, 1972; physics.md §10)', () => {
    // ψ = (2ξ_s)^{−1/2} sech(ξ/ξ_s), ξ_s = 4/|g|, μ = −g²/16 in natural units (ħ = 1, m = ½): ψ(s) = e^{−iμs}ψ(0)
    const g = -3;
    const width = 4 / Math.abs(g);
    const grid = makeGrid(64, 256);
    const u = new Float64Array(grid.n);
    const exact = grid.x.map((x) => 1 / Math.sqrt(2 * width) / Math.cosh(x / width));
    const H = withMeanField({ grid, terms: (_s, out) => bareTerms(u, out) }, g);
    const s = 4;
    const r = new Propagator(grid).propagate(H, [unitVector(grid, exact)], 0, s, { tol: 1e-14, errorControl: 'global' });
    const mu = -(g * g) / 16;
    const c = Math.cos(-mu * s), sn = Math.sin(-mu * s);
    let worst = 0;
    const root = Math.sqrt(grid.dx);
    for (let j = 0; j < grid.n; j++) worst = Math.max(worst, Math.hypot(r.states[0][2 * j] / root - c * exact[j], r.states[0][2 * j + 1] / root - sn * exact[j]));
    expect(worst).toBeLessThan(1e-8);
  });

  it('conserves norm and energy to 1e-9 and follows ⟨ξ⟩ = d cos ωs in a static harmonic trap (harmonic-potential theorem: Dobson, PRL 73, 2244, 1994)', () => {
    const omega = 1, g = 10, d = 2;
    const grid = makeGrid(32, 256);
    const trap = (c: number) => grid.x.map((x) => (omega * omega * (x - c) ** 2) / 4); // ½mω²x² with m = ½
    const u = trap(0);
    const start = gpeGroundState(grid, trap(d), g);
    const H = withMeanField({ grid, terms: (_s, out) => bareTerms(u, out) }, g);
    const s = Math.PI; // half a period: ⟨ξ⟩ = −d
    // 2048 fixed steps: the state error (and with it the energy error) is far below 1e-9 (the fifth-order pair)
    const r = new Propagator(grid).propagate(H, [unitVector(grid, start.psi)], 0, s, { fixedSteps: 2048 });
    const psi = r.states[0].map((v) => v / Math.sqrt(grid.dx));
    let norm = 0, mean = 0;
    for (let j = 0; j < grid.n; j++) {
      const rho = psi[2 * j] ** 2 + psi[2 * j + 1] ** 2;
      norm += rho * grid.dx;
      mean += grid.x[j] * rho * grid.dx;
    }
    const e0 = gpeEnergy(grid, u, g, complexFromReal(start.psi));
    expect(Math.abs(norm - 1)).toBeLessThan(1e-9);
    expect(Math.abs(gpeEnergy(grid, u, g, psi) - e0) / Math.abs(e0)).toBeLessThan(1e-9);
    expect(Math.abs(mean - d * Math.cos(omega * s))).toBeLessThan(1e-7);
  });

  it('agrees with the independent Strang–Yoshida splitting (gpe.ts) on a time-dependent painted drive to 1e-8', () => {
    // two different methods (exponential RK pair with the mean field in its stages; unitary splitting with the
    // mean field as an exact phase) on the same equation
    const grid = makeGrid(30, 256);
    const potential = (l: number, out: Float64Array) => { for (let j = 0; j < grid.n; j++) out[j] = twoSolitonFromSech2(grid.x[j], l); };
    const ramp = makeRamp('sin2', 0.5, 0.25);
    const g = 2;
    const u0 = new Float64Array(grid.n);
    potential(0, u0);
    const start = gpeGroundState(grid, u0, g);
    const H = paintedDrive(grid, potential, groundStateField(grid, potential, 0, 0.25, { coupling: g }), ramp);
    const a = new Propagator(grid).propagate(withMeanField(H, g), [unitVector(grid, start.psi)], 0, 0.5, { fixedSteps: 4096 }).states[0];
    const terms = { c1: 0, c2: 1, c3: 0, v: null as Float64Array | null, w: null as Float64Array | null, b: 0 };
    const b = gpeEvolve(grid, (s, out) => { H.terms(s, terms); out.set(terms.v as Float64Array); }, g, complexFromReal(start.psi), 0, 0.5, { tol: 1e-13 }).psi;
    let worst = 0;
    for (let j = 0; j < 2 * grid.n; j++) worst = Math.max(worst, Math.abs(a[j] / Math.sqrt(grid.dx) - b[j]));
    expect(worst).toBeLessThan(1e-8);
  }, 30_000);
});

describe('the trap must hold the condensate along the whole sequence', () => {
  it('a well that nearly closes half-way is refused there, though it holds the condensate at both ends', () => {
    // u = −6(1 − 0.99 sin πλ) sech²ξ: bound state −4 E₀ at the ends (Pöschl–Teller), a well only 0.06 E₀ deep half-way,
    // where μ of a condensate with g = 3 lies above the rim u = 0 (invented test potential)
    const grid = makeGrid(30, 256);
    const potential = (l: number, out: Float64Array) => { for (let j = 0; j < grid.n; j++) out[j] = (-6 * (1 - 0.99 * Math.sin(Math.PI * l))) / Math.cosh(grid.x[j]) ** 2; };
    const err = (() => { try { condensateGrounds(grid, potential, 1, 3); return null; } catch (e) { return e; } })();
    expect(err).toBeInstanceOf(CondensateNotHeldError);
    expect((err as CondensateNotHeldError).where).toMatch(/^λ = /);
    // the same condensate is held by the fixed well at both ends
    const fixed = (_l: number, out: Float64Array) => potential(0, out);
    expect(() => condensateGrounds(grid, fixed, 1, 3)).not.toThrow();
  });
});

describe('the condensate drives through a designed split', () => {
  // the exact two-soliton flow of u = −6 sech² ξ (physics.md §4), split in T = 0.5 t₀ with a sin² ramp
  const grid = makeGrid(30, 256);
  const potential = (l: number, out: Float64Array) => { for (let j = 0; j < grid.n; j++) out[j] = twoSolitonFromSech2(grid.x[j], l); };
  const ramp = makeRamp('sin2', 0.5, 0.25);

  it('the painted protocol of the condensate keeps its nonlinear ground state to 1 − 1e-6 at every coupling, where the cubic correction degrades (fast-forward: Masuda, PRA 86, 063624, 2012)', () => {
    const losses: number[] = [];
    for (const g of [-1, 0.5, 2, 8]) {
      const r = driveCondensate({ grid, potential, ramp, coupling: g, tol: 1e-10, drives: ['cd', 'painted_condensate'] });
      const painted = r.drives.find((d) => d.drive === 'painted_condensate')!;
      const cd = r.drives.find((d) => d.drive === 'cd')!;
      expect(1 - painted.fidelity).toBeLessThan(1e-6);
      expect(painted.excess).toBeLessThan(1e-5);
      if (g > 0) losses.push(1 - cd.fidelity);
    }
    // the cubic correction is exact only at g = 0: its loss grows with the coupling
    expect(losses[0]).toBeGreaterThan(1e-5);
    expect(losses[1]).toBeGreaterThan(losses[0]);
    expect(losses[2]).toBeGreaterThan(losses[1]);
  }, 60_000);
});

const NATURAL = (interaction: Record<string, number>, duration = 0.5) => ({
  name: 'condensate',
  units: { system: 'natural' },
  grid: { length: 30, points: 256 },
  initial: { kind: 'sech2', depth: 6, width: 1, center: 0 },
  flow: { lambda_end: 0.25, frames: 11 },
  protocol: { duration, ramp: 'sin2' },
  verify: { states: 2, interaction },
});

/** an illustrative ⁸⁷Rb condensate (invented): 20 atoms, a_s = 100.4 a₀, a 2π × 1 kHz guide, a 0.35 h·kHz well split */
const RB_DOC = {
  name: 'rb-condensate',
  units: { system: 'lab', species: 'Rb87', length_unit_um: 1, energy: 'h*kHz' },
  grid: { length: 30, points: 256 },
  initial: { kind: 'sech2', depth: 0.3489, width: 1, center: 0 },
  flow: { lambda_end: 0.25, frames: 11 },
  protocol: { duration: 1.37, ramp: 'sin2' },
  verify: { states: 2, interaction: { atoms: 20, scattering_length_bohr: 100.4, transverse_hz: 1000 } },
};

describe('verify.interaction', () => {
  it('g → 0 reproduces the single-particle verify to the time-stepping budget, with μ = E = −4 (Pöschl–Teller, physics.md §4)', async () => {
    // a ramp slow enough that the bare drive keeps part of the ground state: both fidelities are informative
    // g = g₁D N = 1e-3 E₀ℓ: the mean-field path of the propagator runs, and its effect (≈ 4e-9 in 1 − F, second
    // order in g) lies inside the budget
    const config = parseConfig(stringify(NATURAL({ atoms: 1000, g1d: 1e-6 }, 2)), 'zero.yaml', tmpdir());
    const v = (await runVerify(config, runDesign(config), { traceSamples: 0 })).file;
    const c = v.interaction!;
    const by = (d: string) => c.drives.find((x) => x.drive === d)!;
    expect(c.coupling_natural).toBeCloseTo(1e-3, 12);
    expect(v.states[0].fidelity_bare).toBeGreaterThan(0.1);
    expect(v.states[0].fidelity_bare).toBeLessThan(0.9);
    // the budget verify.tolerance = 1e-8 bounds each infidelity; a fidelity moves by at most 2√tol (common practice)
    expect(Math.abs(by('cd').fidelity - v.states[0].fidelity_cd)).toBeLessThan(2e-4);
    expect(Math.abs(by('bare').fidelity - v.states[0].fidelity_bare)).toBeLessThan(2e-4);
    expect(Math.abs(by('bare').excess - v.states[0].excess_bare)).toBeLessThan(1e-3 * Math.abs(v.states[0].excess_bare));
    // the sequence starts from the flow of −6 sech²: its ground level −4 E₀ (Landau & Lifshitz, QM §23)
    // (first-order shifts g∫ψ⁴ ≈ 1e-3 × 0.75 in μ and half that in E)
    expect(Math.abs(c.start.chemical_potential + 4)).toBeLessThan(2e-3);
    expect(Math.abs(c.start.energy + 4)).toBeLessThan(1e-3);
    expect(1 - by('painted_condensate').fidelity).toBeLessThan(1e-6);
    // the report's figure shows the summary's numbers
    const fig = condensateFigure(v)!;
    expect(fig.caption).toContain(c.verdict);
  }, 60_000);

  it('states the condensate in its cost estimate, and its progress never goes back and reaches 1 through the condensate stages', async () => {
    const config = parseConfig(stringify(NATURAL({ atoms: 100, g1d: 0.02 })), 'progress.yaml', tmpdir());
    const context = makeContext(config);
    const withIt = assertVerifyAffordable(config, context, 0.5, 0)!;
    const without = assertVerifyAffordable(parseConfig(stringify({ ...NATURAL({}), verify: { states: 2 } }), 'plain.yaml', tmpdir()), context, 0.5, 0)!;
    expect(withIt.text).toContain('a condensate: 3 one-state drives');
    expect(withIt.seconds).toBeGreaterThan(without.seconds);
    const seen: { f: number; stage: string }[] = [];
    await runVerify(config, runDesign(config), { traceSamples: 0, onProgress: (f, stage) => seen.push({ f, stage }) });
    for (let i = 1; i < seen.length; i++) expect(seen[i].f, `${seen[i - 1].stage} → ${seen[i].stage}`).toBeGreaterThanOrEqual(seen[i - 1].f);
    expect(seen[seen.length - 1].f).toBe(1);
    for (const st of ['condensate: cd drive', 'condensate: painted field', 'condensate: bare drive']) expect(seen.some((x) => x.stage === st)).toBe(true);
  }, 60_000);

  it('lab units: g₁D = 2ħω⊥a_s of ⁸⁷Rb in a 2π × 1 kHz guide, reported in h·kHz·µm (Olshanii, PRL 81, 938, 1998)', async () => {
    // a_s = 100.4 a₀ for ⁸⁷Rb |F = 1, m = −1⟩ (van Kempen et al., PRL 88, 093201, 2002; from memory); a₀ = 5.29177210903e-11 m
    // (CODATA 2018). a⊥ = √(ħ/mω⊥) = 0.34103 µm for m = 86.909180531 u.
    const aS = 100.4 * 5.29177210903e-11;
    const m = 86.909180531 * 1.66053906660e-27;
    const omega = 2 * Math.PI * 1000;
    const g1dJm = 2 * 1.054571817e-34 * omega * aS;
    const c = guideCoupling(m, 1000, aS);
    expect(Math.abs(c.g1dJm / g1dJm - 1)).toBeLessThan(1e-9);
    expect(Math.abs(c.aPerpM - Math.sqrt(HBAR / (m * omega)))).toBeLessThan(1e-15);
    expect(Math.abs(c.aPerpM * 1e6 - 0.34103)).toBeLessThan(1e-5);
    // the same through a lab config: g₁D per atom in h·kHz·µm = g1dJm / (h·1e3 · 1e-6)
    const config = parseConfig(stringify(RB_DOC), 'rb.yaml', tmpdir());
    const v = (await runVerify(config, runDesign(config), { traceSamples: 0 })).file;
    const it = v.interaction!;
    expect(it.g1d_unit).toBe('h·kHz·µm');
    expect(Math.abs(it.g1d / (g1dJm / (6.62607015e-34 * 1e3 * 1e-6)) - 1)).toBeLessThan(1e-9);
    expect(Math.abs(it.transverse_length! - 0.34103)).toBeLessThan(1e-5);
    // Olshanii's C = 1.0326 with the relative-motion length √(2ħ/mω⊥) = √2 a⊥ (Bergeman, Moore & Olshanii, PRL 91,
    // 163201, 2003; from memory): x = 1.0326 × 5.313 nm / 482.3 nm = 0.01138
    expect(Math.abs(it.olshanii_correction! - 0.01138)).toBeLessThan(2e-5);
    expect(1 - it.drives.find((d) => d.drive === 'painted_condensate')!.fidelity).toBeLessThan(1e-6);
  }, 60_000);

  it('isotrap export writes the condensate\'s painted protocol: V at both ends (λ̇ = λ̈ = 0 there), V + V_loc between, within verify\'s range; --psf-um simulates it blurred', async () => {
    const root = mkdtempSync(join(tmpdir(), 'isotrap-condensate-export-'));
    const dir = join(root, 'run');
    await runPipeline(parseConfig(stringify(RB_DOC), 'rb.yaml', root), { dir, force: false, report: false, toolVersion: 'test' });
    const verify = JSON.parse(readFileSync(join(dir, 'verify.json'), 'utf8'));
    const r = runExport(dir, { samples: 9, csv: false, out: join(root, 'out'), force: false });
    writeExportOutputs(r, false);
    const side = readExportFile(join(root, 'out', EXPORT_JSON));
    const a = side.arrays.painted_condensate;
    expect(a.file).toBe('export-painted-condensate.npy');
    const painted = decodeNpy(readFileSync(join(root, 'out', a.file)), a.file);
    const v = r.arrays.potential.data;
    const n = 256;
    const depth = Math.abs(side.painted!.start.deepest);
    const diff = (i: number) => { let d = 0; for (let j = 0; j < n; j++) d = Math.max(d, Math.abs(painted.data[i * n + j] - v[i * n + j])); return d; };
    expect(diff(0)).toBeLessThan(1e-12 * depth);
    expect(diff(8)).toBeLessThan(1e-12 * depth);
    expect(diff(4)).toBeGreaterThan(1e-3 * depth);
    // the exported samples lie inside the range verify recorded at every stage of its propagation
    const entry = side.painted!.drives.find((d) => d.drive === 'painted_condensate')!;
    expect(entry.deepest).toBeGreaterThanOrEqual(verify.interaction.painted_range.deepest - 1e-9 * depth);
    expect(entry.highest).toBeLessThanOrEqual(verify.interaction.painted_range.highest + 1e-9 * depth);
    const blurred = runExport(dir, { samples: 5, csv: false, out: join(root, 'psf'), force: false, psfUm: 0.05 });
    const b = blurred.file.painted!.psf!.drives.find((d) => d.drive === 'painted_condensate')!;
    expect(b.fidelity_unblurred[0]).toBeCloseTo(verify.interaction.drives.find((d: { drive: string }) => d.drive === 'painted_condensate').fidelity, 12);
    expect(b.lost).toBeGreaterThanOrEqual(0);
    expect(b.lost).toBeLessThan(1e-2);
  }, 120_000);

  it('refuses bad interaction sections with exit 2, naming the key, writing nothing', () => {
    const dir = mkdtempSync(join(tmpdir(), 'isotrap-condensate-'));
    const cases: [Record<string, unknown>, string][] = [
      [{ atoms: 100, scattering_length_nm: 5 }, 'verify.interaction.transverse_hz'],
      [{ atoms: 100, g1d: 0.01, scattering_length_nm: 5 }, 'verify.interaction.scattering_length_nm'],
      [{ atoms: 100 }, 'verify.interaction.g1d'],
      [{ atoms: 0, g1d: 0.01 }, 'verify.interaction.atoms'],
      [{ atoms: 100, scattering_length_nm: 5, transverse_hz: 1000 }, 'verify.interaction.scattering_length_nm'], // natural units
      [{ atoms: 1000, g1d: 0.02 }, 'verify.interaction.atoms'], // μ above the rim: not held
    ];
    for (const [interaction, key] of cases) {
      writeFileSync(join(dir, 'c.yaml'), stringify(NATURAL(interaction as Record<string, number>)));
      const r = spawnSync(process.execPath, [BIN, 'verify', 'c.yaml', '--out', 'out', '--quiet'], { cwd: dir, encoding: 'utf8' });
      expect(r.status, r.stderr).toBe(2);
      expect(r.stderr).toContain(key);
      expect(r.stderr).not.toMatch(/\n\s+at /);
      expect(existsSync(join(dir, 'out'))).toBe(false);
    }
    // a bright condensate narrower than the grid: its width 4/|g| = 0.04 ℓ against a spacing of 0.12 ℓ (physics.md §10)
    writeFileSync(join(dir, 'c.yaml'), stringify(NATURAL({ atoms: 100, g1d: -1 })));
    const r = spawnSync(process.execPath, [BIN, 'verify', 'c.yaml', '--out', 'out', '--quiet'], { cwd: dir, encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(1);
    expect(r.stderr).toMatch(/does not resolve the condensate.*grid\.points/);
    expect(existsSync(join(dir, 'out'))).toBe(false);
  }, 60_000);

  it('a sweep over the atom number: the painted protocol keeps 1 − 1e-6 at every point, the cubic correction crosses the target', async () => {
    const raw = parseYaml(stringify(NATURAL({ atoms: 1, g1d: 0.02 })), 'sweep.yaml');
    const input = { raw, source: 'sweep.yaml', baseDir: tmpdir() };
    const dir = join(mkdtempSync(join(tmpdir(), 'isotrap-condensate-sweep-')), 'out');
    const r = await runSweep(input, planSweep(input, { vary: ['verify.interaction.atoms=1,30,100'] }), { dir, force: false, threads: 2, toolVersion: 'test' });
    for (const p of r.file.points) {
      expect(p.error).toBeNull();
      expect(1 - p.drives.find((d) => d.drive === 'condensate_painted')!.min_fidelity).toBeLessThan(1e-6);
    }
    const loss = r.file.points.map((p) => 1 - p.drives.find((d) => d.drive === 'condensate_cd')!.min_fidelity);
    expect(loss[0]).toBeLessThan(1e-3);
    expect(loss[2]).toBeGreaterThan(1e-3);
    const tol = r.file.tolerances!.find((t) => t.drive === 'condensate_cd' && t.subject === 'ground')!;
    expect(tol.key).toBe('verify.interaction.atoms');
    expect(tol.tolerance).toBe(loss[1] <= 1e-3 ? 30 : 1);
    expect(tol.interpolated).not.toBeNull();
    expect(r.file.plan.axes[0].unit).toBe('atoms');
  }, 120_000);
});
