import { existsSync, mkdtempSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { encodeNpy } from '../src/io/npy.ts';
import { writeCsv } from '../src/io/csv.ts';
import { UserError } from '../src/core/errors.ts';
import { integrateFlow } from '../src/flow/kdv.ts';
import { makeGrid, type Grid } from '../src/spectral/grid.ts';
import { spectrum } from '../src/spectral/ops.ts';
import { RealFFT } from '../src/spectral/fft.ts';
import { unitSystemOfSequence } from '../src/io/external-sequence.ts';
import { fornbergWeights } from '../src/check/fornberg.ts';
import { CHECK_FILES, checkExitCode, checkRequestText, runCheck, writeCheckOutputs } from '../src/jobs/check.ts';
import { configHash, requireOneConfig } from '../src/io/run-folder.ts';

const L = 40;
const N = 256;
/** frame spacing (any spacing the grid resolves works for the flow fit; small here to keep the tests fast) */
const H = 5e-4;
const FRAMES = 21;
/** unevenly spaced frames (the check must not assume uniform λ) */
const lambdas = Array.from({ length: FRAMES }, (_, i) => H * (i + 0.3 * Math.sin(i)));

const tmp = () => mkdtempSync(join(tmpdir(), 'isotrap-check-'));

/** project onto the 2/3-rule band the flow integrator keeps, so frame 0 is exactly the integrated state */
function bandLimit(grid: Grid, u: Float64Array): Float64Array {
  const s = spectrum(u);
  for (let m = Math.floor(grid.n / 3) + 1; m <= grid.n / 2; m++) s[2 * m] = s[2 * m + 1] = 0;
  const out = new Float64Array(grid.n);
  new RealFFT(grid.n).inverse(s, out);
  return out;
}

/** the −6 sech²ξ split (physics.md §4; Drazin & Johnson 1989) integrated by the project's flow, natural units */
function splitSequence(drift = 0): { grid: Grid; frames: Float64Array[] } {
  const grid = makeGrid(L, N);
  const u0 = bandLimit(grid, grid.x.map((x) => -6 / Math.cosh(x) ** 2));
  const run = integrateFlow(grid, { alpha: -6, beta: 1, drift }, u0, { tolerance: 1e-12, frames: lambdas });
  return { grid, frames: run.frames };
}

function writeNpySequence(dir: string, grid: Grid, frames: Float64Array[], extra: Record<string, unknown> = {}, lam = lambdas): string {
  const flat = new Float64Array(frames.length * grid.n);
  frames.forEach((f, k) => flat.set(f, k * grid.n));
  writeFileSync(join(dir, 'potential.npy'), encodeNpy(flat, [frames.length, grid.n]));
  writeFileSync(
    join(dir, 'sequence.json'),
    JSON.stringify({ x: Array.from(grid.x), lambda: lam, length_unit: 'ℓ', energy_unit: 'E₀', species: null, mass_u: null, length_unit_um: null, ...extra }),
  );
  return join(dir, 'potential.npy');
}

describe('Fornberg finite-difference weights', () => {
  it('reproduce the classical 5-point first-derivative formulas', () => {
    // Fornberg, Math. Comp. 51, 699 (1988), Table 1: centred (1, −8, 0, 8, −1)/12, one-sided
    // (−25/12, 4, −3, 4/3, −1/4) for h = 1
    const c = fornbergWeights(0, [-2, -1, 0, 1, 2], 1)[1];
    [1 / 12, -8 / 12, 0, 8 / 12, -1 / 12].forEach((w, i) => expect(c[i]).toBeCloseTo(w, 14));
    const o = fornbergWeights(0, [0, 1, 2, 3, 4], 1)[1];
    [-25 / 12, 4, -3, 4 / 3, -1 / 4].forEach((w, i) => expect(o[i]).toBeCloseTo(w, 13));
  });
  it('are exact for quartics on non-uniform nodes', () => {
    // a 5-node formula is exact for polynomials of degree ≤ 4 (Fornberg 1988, §2): d/dx x⁴ at 0.3 = 4·0.3³
    const nodes = [0, 0.13, 0.41, 0.5, 0.97];
    const w = fornbergWeights(0.3, nodes, 1)[1];
    const d = nodes.reduce((s, x, i) => s + w[i] * x ** 4, 0);
    expect(d).toBeCloseTo(4 * 0.3 ** 3, 12);
  });
});

describe('isotrap check: admissible sequences', () => {
  const { grid, frames } = splitSequence();

  it('the integrated −6 sech² split passes with residual ≤ 1e-6, Δτ_k = Δλ_k, c = 0, and repairs onto itself', () => {
    const dir = tmp();
    const input = writeNpySequence(dir, grid, frames);
    const r = runCheck({ input, tolerance: 1e-6 });
    expect(r.admissible).toBe(true);
    expect(checkExitCode(r)).toBe(0);
    for (const it of r.report.intervals) {
      expect(it.residual).toBeLessThanOrEqual(1e-6);
      // the frames are the flow u_τ = 6uu_ξ − u_ξξξ itself at τ = λ (physics.md §3), drift 0
      expect(Math.abs(it.dtau - (lambdas[it.index + 1] - lambdas[it.index]))).toBeLessThan(1e-6);
      expect(Math.abs(it.drift)).toBeLessThan(1e-4);
    }
    expect(r.report.fit.lambda_mismatch as number).toBeLessThan(1e-4);
    // Pöschl–Teller levels −4, −1 of −6 sech² (Landau & Lifshitz §23) stay put along an isospectral flow
    expect(r.report.spectrum.reference[0]).toBeCloseTo(-4, 7);
    expect(r.report.spectrum.reference[1]).toBeCloseTo(-1, 7);
    expect(r.report.spectral_drift).toBeLessThan(1e-8);
    // the repaired sequence applies the fitted maps from the same first frame (common practice: ≈ flow tolerance)
    expect(r.report.repaired.relative_l2).toBeLessThan(1e-7);
    const files = writeCheckOutputs(r, join(dir, 'out'), false);
    const json = JSON.parse(readFileSync(files[0], 'utf8'));
    expect(json.admissible).toBe(true);
    expect(json.frames[3]).toMatchObject({ index: 3, lambda: lambdas[3] });
    expect(existsSync(files[1]) && existsSync(files[2])).toBe(true);
    // writing again without force refuses (the output folder already holds check.json)
    expect(() => writeCheckOutputs(r, join(dir, 'out'), false)).toThrow(/already exist/);
    // the folder is one run: every file in the manifest with its SHA-256 and the hash of the request (io/run-folder.ts)
    const entries = requireOneConfig(join(dir, 'out'), [...CHECK_FILES]);
    expect(entries.map((e) => e.job)).toEqual(['check', 'check', 'check', 'check']);
    expect(entries[0].config_hash).toBe(configHash(checkRequestText(r.report)));
    expect(readdirSync(join(dir, 'out')).filter((f) => f.startsWith('.isotrap'))).toEqual([]);
  });

  it('a lab-units CSV of the split with a drift gives Δτ = Δλ and c = the drift in µm per unit τ', () => {
    const drift = 0.7;
    const { grid: g, frames: fr } = splitSequence(drift);
    const units = { length_unit: 'µm', energy_unit: 'h·kHz', species: 'Rb87', length_unit_um: 1 } as const;
    const sys = unitSystemOfSequence({ length_unit: 'µm', energy_unit: 'h·kHz', species: '⁸⁷Rb', mass_u: 86.909180531, length_unit_um: 1 });
    const dir = tmp();
    const cols = [g.x.map(sys.lengthFromNatural), ...fr.map((f) => f.map(sys.energyFromNatural))];
    writeFileSync(join(dir, 'seq.csv'), writeCsv(['x (µm)', ...lambdas.map((l) => `lambda=${l}`)], cols));
    writeFileSync(join(dir, 'seq.yaml'), `energy_unit: h*kHz\nspecies: Rb87\n`);
    const r = runCheck({ input: join(dir, 'seq.csv'), tolerance: 1e-6 });
    expect(r.admissible).toBe(true);
    expect(r.report.units.species).toBe('⁸⁷Rb');
    for (const it of r.report.intervals) {
      expect(it.residual).toBeLessThanOrEqual(1e-6);
      // with ℓ = 1 µm the natural flow is the design's (physics.md §3): τ = λ and c the design's drift
      // (flow/kdv.ts u_t + … + c u_x = 0), µm per unit τ
      expect(Math.abs(it.dtau - (lambdas[it.index + 1] - lambdas[it.index]))).toBeLessThan(1e-6);
      expect(it.drift).toBeCloseTo(drift, 4);
    }
    // the same result with the units given as options instead of the sidecar
    writeFileSync(join(dir, 'seq.yaml'), `{}\n`);
    const r2 = runCheck({ input: join(dir, 'seq.csv'), units, tolerance: 1e-6 });
    expect(r2.report.intervals[4].drift).toBeCloseTo(drift, 4);
  });
});

describe('isotrap check: sequences that are not admissible', () => {
  it('one frame deepened by 1 %: exactly the two intervals touching it are named, in one line', () => {
    const { grid, frames } = splitSequence();
    const bad = 10;
    frames[bad] = frames[bad].map((v) => 1.01 * v);
    const r = runCheck({ input: writeNpySequence(tmp(), grid, frames) });
    expect(r.admissible).toBe(false);
    expect(checkExitCode(r)).toBe(1);
    // no KdV time reaches or leaves a frame scaled by 1.01 (the flow conserves ∫u dξ, Miura, Gardner & Kruskal 1968)
    expect(r.report.fit.failed).toEqual([bad - 1, bad]);
    expect(r.report.failures).toHaveLength(1);
    expect(r.report.failures[0]).toMatch(new RegExp(`^intervals ${bad - 1}–${bad} \\(frames ${bad - 1}–${bad + 1}\\)`));
    expect(r.report.failures[0]).toMatch(/bound states move at frame 10/);
    const f = r.report.frames;
    // first-order perturbation: E_n shifts by 0.01⟨n|u|n⟩, about 1 % of the level (Landau & Lifshitz §38)
    expect(f[bad].spectral_drift_relative as number).toBeGreaterThan(3e-3);
    const sampled = f.filter((fr) => fr.spectral_drift_relative !== null);
    expect(sampled.map((fr) => fr.index)).toEqual([0, 3, 5, 8, 9, 10, 11, 13, 15, 18, 20]); // 9 evenly spaced + frames of failing intervals
    for (const fr of sampled) if (fr.index !== bad) expect(fr.spectral_drift_relative as number).toBeLessThan(1e-6);
    expect(f[bad].isospectral).toBe(false);
  });

  it('a well that deepens in λ fails isospectrality and says so', () => {
    const g = makeGrid(L, N);
    // −s(s+1) sech²ξ has levels −(s − n)² (Pöschl–Teller, Landau & Lifshitz §23): they move as s grows
    const lam = [0, 0.01, 0.02, 0.035, 0.05];
    const fr = lam.map((l) => g.x.map((x) => -(2 + l) / Math.cosh(x) ** 2));
    const r = runCheck({ input: writeNpySequence(tmp(), g, fr, {}, lam) });
    expect(r.admissible).toBe(false);
    expect(r.report.isospectral).toBe(false);
    expect(r.report.failures.some((s) => s.includes('not isospectral'))).toBe(true);
    // ground level −s² with s(s+1) = 2 + λ: spread from λ = 0 to 0.05
    const s = (d: number) => (-1 + Math.sqrt(1 + 4 * d)) / 2;
    expect(r.report.spectral_drift).toBeCloseTo(s(2.05) ** 2 - s(2) ** 2, 6);
  });
});

describe('isotrap check: malformed input', () => {
  const g = makeGrid(L, 32);
  const header = 'x (ℓ),lambda=0,lambda=0.1,lambda=0.2';
  const rows = Array.from(g.x, (x) => `${x},${-Math.exp(-x * x)},${-Math.exp(-x * x)},${-Math.exp(-x * x)}`);
  const sidecar = 'energy_unit: E0\n';
  const cases: [string, (r: string[]) => string[], string | null, RegExp][] = [
    ['ragged row', (r) => { r[4] += ',1'; return r; }, sidecar, /row 6 has 5 columns, expected 4/],
    ['non-numeric cell', (r) => { r[2] = r[2].replace(/,[^,]*$/, ',abc'); return r; }, sidecar, /row 4, column 4 = "abc" is not a number/],
    ['NaN cell', (r) => { r[3] = r[3].replace(/,[^,]*$/, ',NaN'); return r; }, sidecar, /row 5, column 4 = "NaN" is not allowed/],
    ['non-uniform x', (r) => { r[7] = r[7].replace(/^[^,]*/, String(g.x[7] + 0.01)); return r; }, sidecar, /x is not uniformly spaced: row 9/],
    ['too few frames', (r) => r.map((s) => s.replace(/,[^,]*,[^,]*$/, '')), sidecar, /1 frame column, at least 2/],
    ['units missing', (r) => r, null, /units missing: no energy_unit/],
  ];
  for (const [name, edit, side, message] of cases) {
    it(`${name}: its own message, nothing written`, () => {
      const dir = tmp();
      let head = header;
      if (name === 'too few frames') head = 'x (ℓ),lambda=0';
      writeFileSync(join(dir, 'bad.csv'), [head, ...edit([...rows])].join('\n') + '\n');
      if (side) writeFileSync(join(dir, 'bad.yaml'), side);
      const out = join(dir, 'out');
      let err: unknown;
      try {
        writeCheckOutputs(runCheck({ input: join(dir, 'bad.csv') }), out, false);
      } catch (e) {
        err = e;
      }
      expect(err).toBeInstanceOf(UserError);
      expect((err as UserError).exitCode).toBe(2);
      expect((err as Error).message).toMatch(message);
      expect((err as Error).message).toContain('bad.csv');
      expect(existsSync(out)).toBe(false);
    });
  }
  it('a .npy without a sidecar, or with a sidecar of the wrong length, is refused with its own message', () => {
    const dir = tmp();
    const flat = new Float64Array(3 * 32);
    writeFileSync(join(dir, 'v.npy'), encodeNpy(flat, [3, 32]));
    expect(() => runCheck({ input: join(dir, 'v.npy') })).toThrow(/v\.npy: no sidecar found/);
    writeFileSync(join(dir, 'v.json'), JSON.stringify({ x: Array.from(g.x).slice(1), lambda: [0, 1, 2], length_unit: 'ℓ', energy_unit: 'E₀' }));
    expect(() => runCheck({ input: join(dir, 'v.npy') })).toThrow(/v\.json: x has 31 values but .*v\.npy has 32 points/);
    writeFileSync(join(dir, 'v.json'), JSON.stringify({ x: Array.from(g.x), lambda: [0, 1, 2], length_unit: 'µm', energy_unit: 'E₀' }));
    expect(() => runCheck({ input: join(dir, 'v.npy') })).toThrow(/natural units need "ℓ" with "E₀"/);
    writeFileSync(join(dir, 'v.json'), JSON.stringify({ x: Array.from(g.x), lambda: [0, 1, 2], length_unit: 'µm', energy_unit: 'µK' }));
    expect(() => runCheck({ input: join(dir, 'v.npy') })).toThrow(/units missing: lab units .* need the particle mass/);
    writeFileSync(join(dir, 'v.json'), JSON.stringify({ x: Array.from(g.x), lambda: [0, 2, 1], length_unit: 'ℓ', energy_unit: 'E₀' }));
    expect(() => runCheck({ input: join(dir, 'v.npy') })).toThrow(/λ must increase strictly .* frame 2/);
    // a sidecar that is a folder, and a sequence that is a device, are input errors (POSIX: not regular files)
    expect(() => runCheck({ input: join(dir, 'v.npy'), sidecar: dir })).toThrow(new RegExp(`sidecar ${dir} is not a regular file`));
    expect(() => runCheck({ input: '/dev/zero' })).toThrow(UserError);
  });
  it('x with a non-power-of-two count whose last point repeats the first: the duplicated periodic end point is pointed out', () => {
    const dir = tmp();
    const x = Array.from({ length: 33 }, (_, j) => -20 + (40 * j) / 32);
    writeFileSync(join(dir, 'p.csv'), [header, ...x.map((v) => `${v},-1,-1,-1`)].join('\n') + '\n');
    writeFileSync(join(dir, 'p.yaml'), sidecar);
    expect(() => runCheck({ input: join(dir, 'p.csv') })).toThrow(/33 points and every frame ends on its first value.*drop it/);
  });
});
