import { mkdirSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { UserError } from '../src/core/errors.ts';
import { readExportFile } from '../src/io/formats/export.ts';
import { decodeNpy } from '../src/io/npy.ts';
import { encodeNpy } from '../src/io/npy.ts';
import { runCheck, writeCheckOutputs } from '../src/jobs/check.ts';
import { isCheckFolder, runCheckExport } from '../src/jobs/export-check.ts';
import { EXPORT_JSON, writeExportOutputs, type ExportResult } from '../src/jobs/export.ts';
import { makeGrid } from '../src/spectral/grid.ts';

// A harmonic trap whose frequency grows, ω(λ) = 1 + 1.5λ, as a sequence from elsewhere: natural units, H = k² + ω²ξ²/4
// (m = ½, ħ = 1), 11 frames on 30 ℓ, 128 points; the check fits its variational correction on the lowest 4 states
// and the export samples it over a sin² ramp of 3 t₀.
const grid = makeGrid(30, 128);
// λ starts at 0.2 (a sequence from elsewhere need not start at 0): ω(λ) = 1 + 1.5(λ − 0.2)
const LAMBDA0 = 0.2;
const omega = (l: number) => 1 + 1.5 * (l - LAMBDA0);
const LAMBDAS = Array.from({ length: 11 }, (_, i) => LAMBDA0 + i / 10);
const DURATION = 3;
const SAMPLES = 31;

function writeSequence(dir: string): string {
  const flat = new Float64Array(LAMBDAS.length * grid.n);
  LAMBDAS.forEach((l, k) => grid.x.forEach((x, j) => (flat[k * grid.n + j] = (omega(l) ** 2 * x * x) / 4)));
  writeFileSync(join(dir, 'p.npy'), encodeNpy(flat, [LAMBDAS.length, grid.n]));
  writeFileSync(join(dir, 'sequence.json'), JSON.stringify({ x: Array.from(grid.x), lambda: LAMBDAS, length_unit: 'ℓ', energy_unit: 'E₀' }));
  return join(dir, 'p.npy');
}

describe('isotrap export of a check folder with its variational correction', () => {
  let dir: string;
  let out: string;
  let e: ExportResult;
  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'isotrap-export-check-'));
    const input = writeSequence(dir);
    out = join(dir, 'check');
    writeCheckOutputs(runCheck({ input, variational: { states: 4, duration: DURATION } }), out, false);
    e = runCheckExport(out, { samples: SAMPLES, csv: false, force: false });
    writeExportOutputs(e, false);
  }, 120_000);

  it('samples the ramp in lab time: λ, λ̇ and λ̈ of the sin² ramp in closed form, V at both ends the first and last frames', () => {
    expect(isCheckFolder(out)).toBe(true);
    const f = readExportFile(join(out, EXPORT_JSON));
    expect(f.source_kind).toBe('check');
    const n = grid.n;
    for (let i = 0; i < SAMPLES; i++) {
      // sin2: λ = Δλ(r − sin 2πr/2π), λ̇ = (Δλ/T)(1 − cos 2πr), λ̈ = (Δλ/T²)·2π sin 2πr (protocol/ramp.ts, r = t/T)
      const r = e.arrays.t.data[i] / DURATION;
      expect(e.arrays.lambda.data[i]).toBeCloseTo(LAMBDA0 + r - Math.sin(2 * Math.PI * r) / (2 * Math.PI), 12);
      expect(e.arrays.lambda_rate.data[i]).toBeCloseTo((1 - Math.cos(2 * Math.PI * r)) / DURATION, 12);
      expect(e.arrays.lambda_accel.data[i]).toBeCloseTo((2 * Math.PI * Math.sin(2 * Math.PI * r)) / DURATION ** 2, 12);
    }
    const v = e.arrays.potential.data;
    for (let j = 0; j < n; j++) {
      expect(Math.abs(v[j] - grid.x[j] ** 2 / 4)).toBeLessThan(1e-12);
      expect(Math.abs(v[(SAMPLES - 1) * n + j] - (2.5 ** 2 * grid.x[j] ** 2) / 4)).toBeLessThan(1e-10);
    }
    // the arrays on disk are the computed ones
    const onDisk = decodeNpy(readFileSync(join(out, f.arrays.velocity.file)), 'velocity');
    expect(Array.from(onDisk.data)).toEqual(Array.from(e.arrays.velocity.data));
  });

  it('the correction is −(ω̇/4ω)(xp + px): no p³ term and w = −λ̇(dω/dλ)ξ/(2ω) within the linear interpolation between frames (Muga, Chen, Ibáñez, Lizuain & Ruschhaupt, J. Phys. B 43, 085509, 2010)', () => {
    const n = grid.n;
    let worst = 0;
    for (let i = 0; i < SAMPLES; i++) {
      expect(Math.abs(e.arrays.cubic.data[i])).toBeLessThan(1e-6);
      const l = e.arrays.lambda.data[i];
      const rate = e.arrays.lambda_rate.data[i];
      for (let j = 0; j < n; j++) {
        const expected = (-rate * 1.5 * grid.x[j]) / (2 * omega(l));
        worst = Math.max(worst, Math.abs(e.arrays.velocity.data[i * n + j] - expected));
      }
    }
    // linear interpolation of θ(λ) ∝ 1/ω between frames h = 0.1 apart errs by ≤ h²/8·max|θ''|: with |θ| ≤ 1.5·15/2 at
    // the box edge and θ''/θ = 2·1.5²/ω², that is 0.01/8 · 4.5 · 11.25 · max λ̇ (closed-form bound)
    const maxRate = Math.max(...e.arrays.lambda_rate.data);
    expect(worst).toBeLessThan((0.01 / 8) * 4.5 * 11.25 * maxRate);
  });

  it('the painted potential is harmonic with Ω² = ω² − 3ω̇²/(4ω²) + ω̈/(2ω) where the atoms are, and its simulated drive keeps every state to 1 − 1e-6 (Ibáñez, Chen, Torrontegui, Muga & del Campo, PRL 109, 100403, 2012)', () => {
    const n = grid.n;
    const painted = e.painted.painted!.data;
    let worst = 0;
    for (let i = 0; i < SAMPLES; i++) {
      const l = e.arrays.lambda.data[i];
      const w = omega(l), wd = 1.5 * e.arrays.lambda_rate.data[i], wdd = 1.5 * e.arrays.lambda_accel.data[i];
      const big = w * w - (3 * wd * wd) / (4 * w * w) + wdd / (2 * w);
      const row = painted.subarray(i * n, (i + 1) * n);
      const centre = row[n / 2];
      for (let j = 0; j < n; j++) if (Math.abs(grid.x[j]) < 3) worst = Math.max(worst, Math.abs(row[j] - centre - (big * grid.x[j] ** 2) / 4) / ((big * 9) / 4));
    }
    // the painted field's θ(λ) is a cubic Hermite interpolant through the 11 frames (measured 7e-5)
    expect(worst).toBeLessThan(2e-4);
    const drive = e.file.painted!.drives.find((d) => d.drive === 'painted')!;
    expect(drive.fidelity).toHaveLength(4);
    for (const fid of drive.fidelity!) expect(fid).toBeGreaterThan(1 - 1e-6);
    const ground = e.file.painted!.drives.find((d) => d.drive === 'painted_ground')!;
    expect(ground.fidelity![0]).toBeGreaterThan(1 - 1e-6); // one-state exact field (Masuda & Nakamura, Proc. R. Soc. A 466, 1135, 2010)
  });

  it('a check run with a linear ramp exports V and the correction but no painted potential, and says why (λ̇ ≠ 0 at the ends; physics.md §7)', () => {
    const small = makeGrid(30, 64);
    const lam = [0, 0.5, 1];
    const flat = new Float64Array(lam.length * small.n);
    lam.forEach((l, k) => small.x.forEach((x, j) => (flat[k * small.n + j] = ((1 + 0.5 * l) ** 2 * x * x) / 4)));
    const sub = join(dir, 'linear');
    mkdirSync(sub);
    writeFileSync(join(sub, 'q.npy'), encodeNpy(flat, [lam.length, small.n]));
    writeFileSync(join(sub, 'q.json'), JSON.stringify({ x: Array.from(small.x), lambda: lam, length_unit: 'ℓ', energy_unit: 'E₀' }));
    const folder = join(sub, 'check');
    writeCheckOutputs(runCheck({ input: join(sub, 'q.npy'), variational: { states: 2, duration: 2, ramp: 'linear' } }), folder, false);
    // the hardware clock at 1.6 per t₀: t = 0, 0.625, …, 2.5, the last sample past T = 2
    const r = runCheckExport(folder, { rate: 1.6, csv: false, force: false });
    expect(r.file.painted).toBeNull();
    expect(Object.keys(r.painted)).toHaveLength(0);
    expect(r.file.warnings.join(' ')).toMatch(/variational\.comparison\.ramp = linear\) has λ̇ = .* ≠ 0 at the start/);
    // a linear ramp: λ̇ = Δλ/T = 0.5 up to T; past T the ramp holds λ_end, so λ̇ = 0 and no correction is driven
    expect(r.arrays.t.data[4]).toBeCloseTo(2.5, 12);
    expect(r.arrays.lambda_rate.data[3]).toBeCloseTo(0.5, 12);
    expect(r.arrays.lambda_rate.data[4]).toBe(0);
    expect(r.arrays.cubic.data[4]).toBe(0);
    expect(Math.max(...r.arrays.velocity.data.subarray(4 * small.n).map(Math.abs))).toBe(0);
    expect(() => runCheckExport(folder, { samples: 5, csv: false, force: true, psfUm: 1 })).toThrow(/--psf-um blurs the painted potentials/);
  }, 60_000);

  it('a check folder without the variational step is refused, naming the option that adds it', () => {
    const plain = join(dir, 'plain');
    writeCheckOutputs(runCheck({ input: join(dir, 'p.npy') }), plain, false);
    expect(() => runCheckExport(plain, { samples: 5, csv: false, force: false })).toThrow(UserError);
    expect(() => runCheckExport(plain, { samples: 5, csv: false, force: false })).toThrow(/--variational-duration/);
  });
});
