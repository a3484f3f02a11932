import { cpSync, existsSync, mkdtempSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { UserError } from '../src/core/errors.ts';
import { naturalFlowEquation } from '../src/flow/kdv.ts';
import { twoSolitonFromSech2 } from '../src/flow/solitons.ts';
import { parseConfig } from '../src/io/config.ts';
import { readNumericCsv } from '../src/io/csv.ts';
import { EXPORT_ARRAY_KEYS, readExportFile } from '../src/io/formats/export.ts';
import { decodeNpy } from '../src/io/npy.ts';
import { EXPORT_CSV, EXPORT_JSON, EXPORT_NPY, labSeries, runExport, sampleTimes, writeExportOutputs } from '../src/jobs/export.ts';
import { runPipeline } from '../src/jobs/run.ts';
import { runDesign, writeDesignOutputs } from '../src/jobs/design.ts';
import { renderFolder } from '../src/jobs/report.ts';
import { spawnSync } from 'node:child_process';
import { resolve } from 'node:path';
import { parseSvg } from './report-helpers.ts';
import { makeRamp } from '../src/protocol/ramp.ts';
import { makeGrid } from '../src/spectral/grid.ts';
import { SMALL_SOLITON } from './fixtures.ts';

// ⁸⁷Rb with ℓ = 1 µm: E₀ = ħ²/(2mℓ²) in h·kHz and t₀ = ħ/E₀ in ms (CODATA 2018 ħ, h; AME2020 mass)
const hbar = 1.054571817e-34, h = 6.62607015e-34, m = 86.909180531 * 1.6605390666e-27;
const E0kHz = (hbar * hbar) / (2 * m * 1e-12) / h / 1e3;
const t0ms = (hbar / (E0kHz * 1e3 * h)) * 1e3;

/** a ⁸⁷Rb config (ℓ = 1 µm, 256 points) of one sech² well 1 µm wide at −2 µm; depth and duration in E₀ and t₀ */
function rbConfig(name: string, o: { length: number; depthE0: number; lambdaEnd: number; durationT0: number; ramp: string; verify: string }): string {
  return `name: ${name}
units: { system: lab, species: Rb87, length_unit_um: 1, energy: h*kHz }
grid: { length: ${o.length}, points: 256 }
initial: { kind: sech2, depth: ${o.depthE0 * E0kHz}, width: 1, center: -2 }
flow: { lambda_end: ${o.lambdaEnd}, frames: 5 }
protocol: { duration: ${o.durationT0 * t0ms}, ramp: ${o.ramp} }
verify: ${o.verify}
`;
}

const npy = (dir: string, name: string) => decodeNpy(readFileSync(join(dir, name)), name);

describe('lab-time samples of the flow (natural units)', () => {
  it('V at interior t_i equals the closed-form two-soliton split at τ = λ(t_i) to 1e-7 (Drazin & Johnson 1989; physics.md §4)', () => {
    // N = 512 on L = 24: the κ = 2 soliton is resolved to ~1e-9 (at N = 256 the grid alone errs by ~1e-6)
    const grid = makeGrid(24, 512);
    const u0 = grid.x.map((x) => -6 / Math.cosh(x) ** 2);
    const T = 2;
    const ramp = makeRamp('sin2', T, 0.1);
    const times = Float64Array.from([0, 0.37, 0.8, 1.3, T]);
    const s = labSeries({ grid, eq: naturalFlowEquation('quantum'), u0, tolerance: 1e-12, frameLambdas: [0, 0.05, 0.1], ramp, t0: 1, times });
    for (let i = 1; i < times.length - 1; i++) {
      // sin² ramp closed form: λ = λ_end(r − sin 2πr/2π), λ̇ = (λ_end/T)(1 − cos 2πr), r = t/T (protocol/ramp.ts module doc)
      const r = times[i] / T;
      expect(s.lambda[i]).toBeCloseTo(0.1 * (r - Math.sin(2 * Math.PI * r) / (2 * Math.PI)), 14);
      expect(s.rate[i]).toBeCloseTo((0.1 / T) * (1 - Math.cos(2 * Math.PI * r)), 14);
      let worst = 0;
      for (let j = 0; j < grid.n; j++) worst = Math.max(worst, Math.abs(s.potential[i * grid.n + j] - twoSolitonFromSech2(grid.x[j], s.lambda[i])));
      expect(worst).toBeLessThan(1e-7);
    }
  });

  it('samples at the hardware rate: t_i = i/rate up to the first at or past T (common practice: a fixed-clock update)', () => {
    const s = sampleTimes(2, { rate: 2.5 }, 'ms');
    expect(Array.from(s.times)).toEqual([0, 0.4, 0.8, 1.2, 1.6, 2]);
    expect(sampleTimes(1, { rate: 3 }, 'ms').times.at(-1)).toBeCloseTo(1, 15);
    expect(sampleTimes(1.1, { rate: 2 }, 'ms').times.length).toBe(4); // 0, 0.5, 1, 1.5: the last holds the end
    expect(() => sampleTimes(1, { samples: 1 }, 'ms')).toThrow(/--samples = 1 is not allowed/);
    expect(() => sampleTimes(1, { rate: -2 }, 'ms')).toThrow(/--rate = -2 is not allowed/);
    expect(() => sampleTimes(1, { rate: 1, samples: 3 }, 'ms')).toThrow(UserError);
  });
});

describe('isotrap export of a run folder', () => {
  let dir: string;
  beforeAll(async () => {
    const root = mkdtempSync(join(tmpdir(), 'isotrap-export-'));
    dir = join(root, 'run');
    const config = parseConfig(SMALL_SOLITON('exp'), 'exp.yaml', root);
    await runPipeline(config, { dir, force: false, report: false, toolVersion: 'test' });
  }, 120_000);

  it('writes V(x, t_i) whose ends are the design’s first and last frames, the ramp and the correction, named by a valid sidecar', () => {
    const out = join(dir, '..', 'out1');
    const r = runExport(dir, { samples: 5, csv: true, out, force: false });
    writeExportOutputs(r, false);
    const side = readExportFile(join(out, EXPORT_JSON));
    for (const k of EXPORT_ARRAY_KEYS) {
      const a = side.arrays[k];
      const arr = npy(out, a.file);
      expect(arr.shape).toEqual(a.shape);
      expect(a.axes).toHaveLength(a.shape.length);
      expect(a.unit.length).toBeGreaterThan(0);
    }
    const V = npy(out, side.arrays.potential.file);
    const design = npy(dir, 'potential.npy');
    const [nF, n] = design.shape;
    let d0 = 0, dT = 0;
    for (let j = 0; j < n; j++) {
      d0 = Math.max(d0, Math.abs(V.data[j] - design.data[j]));
      dT = Math.max(dT, Math.abs(V.data[4 * n + j] - design.data[(nF - 1) * n + j]));
    }
    // the flow tolerance is 1e-10 of max|V(0)| = 2 per step (SMALL_SOLITON, config default)
    expect(d0).toBeLessThan(1e-9);
    expect(dT).toBeLessThan(1e-9);
    expect(side.accuracy.frames_agreement).toBeLessThan(1e-9);
    // natural units (t₀ = ℓ = E₀ = ħ = 1): A_τ = −4k³ − 3{u,k} (physics.md §3), so C₃ = −4λ̇ and w = λ̇·g = −6λ̇u
    const rate = npy(out, side.arrays.lambda_rate.file).data;
    const cubic = npy(out, side.arrays.cubic.file).data;
    const w = npy(out, side.arrays.velocity.file).data;
    for (let i = 0; i < 5; i++) {
      expect(cubic[i]).toBeCloseTo(-4 * rate[i], 14);
      for (let j = 0; j < n; j += 17) expect(w[i * n + j]).toBeCloseTo(-6 * rate[i] * V.data[i * n + j], 12);
    }
    expect(rate[0]).toBe(0); // sin² ramp: λ̇ = 0 at both ends
    expect(rate[4]).toBe(0);
    // --csv round trip: the table holds the same numbers as the .npy
    const table = readNumericCsv(readFileSync(join(out, EXPORT_CSV[0]), 'utf8'), EXPORT_CSV[0]);
    expect(table.columns.length).toBe(6);
    for (let i = 0; i < 5; i++) for (let j = 0; j < n; j += 31) expect(table.columns[i + 1][j]).toBe(V.data[i * n + j]);
    const ramp = readNumericCsv(readFileSync(join(out, EXPORT_CSV[1]), 'utf8'), EXPORT_CSV[1]);
    expect(Array.from(ramp.columns[1])).toEqual(Array.from(npy(out, side.arrays.lambda.file).data));
    // the figure of the correction peaks at the sidecar's values
    const svg = readFileSync(join(out, 'export-correction.svg'), 'utf8');
    expect(svg).toContain('p³ term');
  });

  it('refuses existing outputs without --force, bad options and folders without the verification, writing nothing', () => {
    const out = join(dir, '..', 'out2');
    writeExportOutputs(runExport(dir, { samples: 3, csv: false, out, force: false }), false);
    const before = readdirSync(out).sort();
    expect(() => runExport(dir, { samples: 3, csv: false, out, force: false })).toThrow(/already exists?|already exist/);
    expect(() => runExport(dir, { rate: 1e9, csv: false, out: join(dir, '..', 'out3'), force: false })).toThrow(/--rate = 1000000000 is not allowed/);
    expect(() => runExport(dir, { samples: 2_000_000, csv: true, out: join(dir, '..', 'out3'), force: false })).toThrow(/--samples 2000000 is not allowed.*GiB/);
    expect(existsSync(join(dir, '..', 'out3'))).toBe(false);
    expect(readdirSync(out).sort()).toEqual(before);
    const bare = join(dir, '..', 'bare');
    const root = join(dir, '..');
    writeDesignOutputs(runDesign(parseConfig(SMALL_SOLITON('exp'), 'exp.yaml', root), { keepDense: false }), bare, false);
    const designOnly = readdirSync(bare).sort();
    expect(() => runExport(bare, { samples: 3, csv: false, force: false })).toThrow(/is missing verify\.json: the design was not verified; give the config a protocol section/);
    expect(readdirSync(bare).sort()).toEqual(designOnly);
    expect(() => runExport(join(root, 'nowhere'), { samples: 3, csv: false, force: false })).toThrow(/does not exist/);
  }, 120_000);

  it('refuses to write when the design was rewritten while the export was computed (common practice: check under the lock)', () => {
    const copy = join(dir, '..', 'copy');
    cpSync(dir, copy, { recursive: true });
    const r = runExport(copy, { samples: 3, csv: false, force: false });
    writeDesignOutputs(runDesign(parseConfig(SMALL_SOLITON('exp'), 'exp.yaml', join(dir, '..')), { keepDense: false }), copy, true);
    expect(() => writeExportOutputs(r, false)).toThrow(/changed while the export was computed/);
    expect(existsSync(join(copy, EXPORT_JSON))).toBe(false);
  });

  it('a sidecar that misnames an array is refused naming the key (common practice: validated readers)', () => {
    const out = join(dir, '..', 'out1');
    const good = JSON.parse(readFileSync(join(out, EXPORT_JSON), 'utf8'));
    const bad = join(dir, '..', 'bad.json');
    writeFileSync(bad, JSON.stringify({ ...good, arrays: { ...good.arrays, potential: { ...good.arrays.potential, axes: ['t'] } } }));
    expect(() => readExportFile(bad)).toThrow(/key arrays\.potential\.axes: names 1 axes for a shape of 2/);
    const { velocity: _dropped, ...fewer } = good.arrays;
    writeFileSync(bad, JSON.stringify({ ...good, arrays: fewer }));
    expect(() => readExportFile(bad)).toThrow(/key arrays\.velocity: missing/);
  });

  it('the report of a folder with an export gains the lab-time figures, peaking at the summary values', () => {
    const r = runExport(dir, { samples: 9, csv: false, force: false });
    writeExportOutputs(r, false);
    renderFolder(dir, { force: false, toolVersion: 'test' });
    const html = readFileSync(join(dir, 'report.html'), 'utf8');
    expect(html).toContain('id="export-ramp');
    expect(html).toContain('lab-time export');
    const doc = parseSvg(readFileSync(join(dir, 'export-correction.svg'), 'utf8'));
    const cubic = doc.querySelector('path.series-line[data-series="p³ term"]');
    expect(Number(cubic?.getAttribute('data-ymax'))).toBeCloseTo(r.file.correction.max_cubic_energy, 10);
    const linear = doc.querySelector('path.series-line[data-series="½{w, p} term"]');
    expect(Number(linear?.getAttribute('data-ymax'))).toBeCloseTo(r.file.correction.max_linear_energy, 10);
  });

  it('the command exits 2 naming the option for a bad --samples and writes nothing (needs npm run build)', () => {
    const bin = resolve('bin/isotrap.js');
    const out = join(dir, '..', 'cli-out');
    const bad = spawnSync(process.execPath, [bin, 'export', dir, '--samples', '0', '--out', out], { encoding: 'utf8' });
    expect(bad.status).toBe(2);
    expect(bad.stderr).toMatch(/--samples = 0 is not allowed/);
    expect(bad.stderr).not.toMatch(/ at .*\.js:\d+/);
    expect(existsSync(out)).toBe(false);
    const none = spawnSync(process.execPath, [bin, 'export', dir, '--out', out], { encoding: 'utf8' });
    expect(none.status).toBe(2);
    expect(none.stderr).toMatch(/--rate/);
    const ok = spawnSync(process.execPath, [bin, 'export', dir, '--samples', '3', '--out', out, '--json'], { encoding: 'utf8' });
    expect(ok.status, ok.stderr).toBe(0);
    expect(JSON.parse(ok.stdout).sampling.samples).toBe(3);
  }, 60_000);
});

describe('isotrap export in lab units', () => {
  it('C₃ = −4λ̇ħℓ³ = −(2/π)λ̇ h·kHz·ms·µm³ and w = −6λ̇ℓV/E₀ (physics.md §3; CODATA 2018 ħ, h; AME2020 ⁸⁷Rb mass)', async () => {
    const root = mkdtempSync(join(tmpdir(), 'isotrap-export-lab-'));
    const dir = join(root, 'run');
    // the one-soliton scenario of SMALL_SOLITON in ⁸⁷Rb units, ℓ = 1 µm: depth 2 E₀, duration 0.4 t₀ (illustrative)
    const yaml = rbConfig('lab', { length: 40, depthE0: 2, lambdaEnd: 0.2, durationT0: 0.4, ramp: 'sin2', verify: '{ states: 2 }' });
    await runPipeline(parseConfig(yaml, 'lab.yaml', root), { dir, force: false, report: false, toolVersion: 'test' });
    const r = runExport(dir, { rate: 4, csv: false, force: false });
    expect(r.file.units).toMatchObject({ energy: 'h·kHz', time: 'ms', length: 'µm', velocity: 'µm/ms' });
    const { lambda_rate: rate, cubic, potential, velocity } = r.arrays;
    const n = potential.shape[1];
    for (let i = 0; i < rate.data.length; i++) {
      expect(cubic.data[i]).toBeCloseTo((-2 / Math.PI) * rate.data[i], 12);
      for (let j = 0; j < n; j += 23) expect(velocity.data[i * n + j] / (-6 * rate.data[i] * potential.data[i * n + j] / E0kHz + 1e-300)).toBeCloseTo(rate.data[i] === 0 ? 0 : 1, 8);
    }
    expect(r.file.sampling.step).toBeCloseTo(0.25, 15); // --rate 4 kHz: one update every 0.25 ms
  }, 120_000);
});

describe('isotrap export of painted corrections (physics.md §7)', () => {
  // an illustrative ⁸⁷Rb scenario (invented): a −6 sech² well of 1 µm split into two; the ground state painted
  let dir: string;
  beforeAll(async () => {
    const root = mkdtempSync(join(tmpdir(), 'isotrap-export-painted-'));
    dir = join(root, 'run');
    const yaml = rbConfig('painted', { length: 24, depthE0: 6, lambdaEnd: 0.1, durationT0: 0.3, ramp: 'smooth', verify: '{ states: 2, painted: [ground] }' });
    await runPipeline(parseConfig(yaml, 'painted.yaml', root), { dir, force: false, report: false, toolVersion: 'test' });
  }, 120_000);

  it('the painted potential equals V at both ends (λ̇ = λ̈ = 0 there, so V_loc = 0), is named by the sidecar, and keeps the ground state to 1 − 1e-6 in verify.json (Masuda & Nakamura, Proc. R. Soc. A 466, 1135, 2010)', () => {
    const verify = JSON.parse(readFileSync(join(dir, 'verify.json'), 'utf8'));
    expect(1 - verify.painted.drives[0].fidelity[0]).toBeLessThan(1e-6);
    const out = join(dir, '..', 'painted-out');
    const r = runExport(dir, { samples: 9, csv: false, out, force: false });
    writeExportOutputs(r, false);
    const side = readExportFile(join(out, EXPORT_JSON));
    const a = side.arrays.painted_ground;
    expect(a.shape).toEqual([9, 256]);
    expect(a.unit).toBe('h·kHz');
    const painted = npy(out, a.file);
    const v = r.arrays.potential.data;
    const n = 256;
    for (const i of [0, 8]) {
      let worst = 0;
      for (let j = 0; j < n; j++) worst = Math.max(worst, Math.abs(painted.data[i * n + j] - v[i * n + j]));
      expect(worst).toBeLessThan(1e-12 * 6 * E0kHz);
    }
    // in between it differs: the correction is painted into the potential
    let mid = 0;
    for (let j = 0; j < n; j++) mid = Math.max(mid, Math.abs(painted.data[4 * n + j] - v[4 * n + j]));
    expect(mid).toBeGreaterThan(1e-3 * 6 * E0kHz);
    // the power budget: the painted range against the starting trap (−6 E₀ deep), in the energy unit
    // (the grid misses the well's centre by up to half a step: sech²(dx/2) = 0.998 of the depth)
    expect(Math.abs(side.painted!.start.deepest / (-6 * E0kHz) - 1)).toBeLessThan(3e-3);
    expect(side.painted?.drives[0].deepest).toBeLessThanOrEqual(side.painted!.start.deepest);
  }, 60_000);

  it('--psf-um blurs every painted frame, simulates the blurred protocol and reports the fidelity lost; a PSF wider than the well warns (Gaussian PSF: spectral/blur.ts)', () => {
    const sharp = runExport(dir, { samples: 5, csv: false, out: join(dir, '..', 'psf-small'), force: false, psfUm: 0.05 });
    const wide = runExport(dir, { samples: 5, csv: false, out: join(dir, '..', 'psf-wide'), force: false, psfUm: 2 });
    const lost = (r: typeof sharp) => r.file.painted!.psf!.drives[0].lost;
    expect(Number.isFinite(lost(sharp)) && Number.isFinite(lost(wide))).toBe(true);
    // a 2 µm blur of a 1 µm well costs more fidelity than a 0.05 µm one
    expect(lost(wide)).toBeGreaterThan(lost(sharp));
    expect(lost(wide)).toBeGreaterThan(1e-3);
    expect(wide.file.warnings.some((w) => /narrower than the optics resolve/.test(w))).toBe(true);
    expect(sharp.file.warnings.some((w) => /narrower than the optics resolve/.test(w))).toBe(false);
    expect(() => runExport(dir, { samples: 5, csv: false, out: join(dir, '..', 'psf-bad'), force: false, psfUm: -1 })).toThrow(/--psf-um = -1 is not allowed/);
  }, 120_000);
});
