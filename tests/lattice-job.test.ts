import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { RB_LATTICE } from './fixtures.ts';
import { afterAll, describe, expect, it } from 'vitest';
import { decodeNpy } from '../src/io/npy.ts';
import { UserError } from '../src/core/errors.ts';
import type { CompareConfig } from '../src/io/config-compare.ts';
import { parseLatticeConfig } from '../src/io/config-lattice.ts';
import { makeContext } from '../src/jobs/context.ts';
import { effectiveMassConfig, latticeParameters, LATTICE_FILES, runLattice, writeLatticeOutputs } from '../src/jobs/lattice.ts';
import { lowestBand } from '../src/lattice/bands.ts';
import { HBAR, PLANCK_H, ATOMIC_MASS_CONSTANT } from '../src/units/constants.ts';
import { configIdentity } from '../src/io/run-folder.ts';

const RB87_U = 86.909180531; // AME2020 via physics.md §3

const labText = RB_LATTICE;

const naturalText = `
name: wide-split
units: { system: natural }
grid: { length: 50, points: 256 }
initial: { kind: sech2, depth: 1.5, width: 2, center: 0 }
flow: { dispersion: quantum, lambda_end: 2.4, frames: 5 }
protocol: { duration: 4, ramp: sin2 }
compare: { samples: 11 }
lattice: { spacing: 0.5, sites_per_width: [1.5, 2], samples: 5 }
`;

function message(fn: () => unknown): string {
  try {
    fn();
  } catch (err) {
    expect(err).toBeInstanceOf(UserError);
    return (err as Error).message;
  }
  throw new Error('expected a UserError');
}

describe('lattice config section (src/io/config-lattice.ts)', () => {
  it('names the key, the value and what is allowed', () => {
    // house rules: every user mistake names key, value and the rule (common practice)
    expect(message(() => parseLatticeConfig(labText('{ tunnelling_hz: 50 }'), 'x.yaml', '.'))).toMatch(/lattice\.spacing_um .*exactly one of lattice\.spacing_um/);
    expect(message(() => parseLatticeConfig(labText('{ spacing_um: 0.5, wavelength_nm: 1064, tunnelling_hz: 50 }'), 'x.yaml', '.'))).toMatch(/exactly one/);
    expect(message(() => parseLatticeConfig(labText('{ spacing_um: 0.5, tunnelling_hz: -1 }'), 'x.yaml', '.'))).toMatch(/lattice\.tunnelling_hz = -1 is not allowed: must be a number > 0/);
    expect(message(() => parseLatticeConfig(labText('{ spacing_um: 0.5, depth_recoil: 400 }'), 'x.yaml', '.'))).toMatch(/lattice\.depth_recoil = 400 .*\(0, 150\]/);
    expect(message(() => parseLatticeConfig(labText('{ spacing_um: 0.5, tunnelling_hz: 50, spacing: 1 }'), 'x.yaml', '.'))).toMatch(/lattice\.spacing .*only allowed with units\.system: natural/);
    expect(message(() => parseLatticeConfig(naturalText.replace('spacing: 0.5', 'spacing_um: 0.5'), 'x.yaml', '.'))).toMatch(/lattice\.spacing is missing|lattice\.spacing_um = 0\.5 is not allowed/);
    expect(message(() => parseLatticeConfig(labText('{ spacing_um: 0.5, tunnelling_hz: 50, colour: 1 }'), 'x.yaml', '.'))).toMatch(/lattice\.colour .*allowed keys in lattice/);
    // both sections in one file: compare and lattice; a lattice config is also a valid compare config (type check)
    const c = parseLatticeConfig(naturalText, 'x.yaml', '.');
    const asCompare: CompareConfig = c;
    expect(asCompare.compare.samples).toBe(11);
    expect(c.lattice?.spacing).toBe(0.5);
    const noSection = parseLatticeConfig(naturalText.replace(/lattice:.*\n/, ''), 'x.yaml', '.');
    expect(message(() => runLattice(noSection))).toMatch(/no lattice section/);
  });

  it('depth in recoil energies: E_R, the deep-lattice estimate and the band value, m* and E₀ of the design', () => {
    const c = parseLatticeConfig(labText('{ wavelength_nm: 1064, depth_recoil: 10, tunnelling_source: estimate }'), 'x.yaml', '.');
    const p = latticeParameters(c);
    // E_R = h²/(2mλ_L²) (common practice; k_L = 2π/λ_L = π/d), ⁸⁷Rb mass from physics.md §3
    const m = RB87_U * ATOMIC_MASS_CONSTANT;
    const erHz = PLANCK_H / (2 * m * 1064e-9 ** 2);
    expect(p.depth?.recoil_hz).toBeCloseTo(erHz, 9);
    expect(erHz).toBeCloseTo(2027.8, 0); // ≈ 2.03 kHz, the familiar ⁸⁷Rb/1064 nm recoil (common practice)
    // Zwerger (J. Opt. B 5, S9, 2003): J = (4/√π) s^{3/4} e^{−2√s} E_R
    expect(p.tunnelling).toBeCloseTo((4 / Math.sqrt(Math.PI)) * 10 ** 0.75 * Math.exp(-2 * Math.sqrt(10)) * erHz, 9);
    expect(p.spacing).toBeCloseTo(0.532, 12);
    expect(p.warnings.join(' ')).toMatch(/differs by 18\.5 %/);
    // m* = ħ²/(2Jd²) (physics.md §6)
    const mStar = HBAR ** 2 / (2 * p.tunnelling * PLANCK_H * 0.532e-6 ** 2);
    expect(p.massStarU).toBeCloseTo(mStar / ATOMIC_MASS_CONSTANT, 6);
    // the design's natural units are those of m*: E₀ = ħ²/(2m*ℓ²) = J d²/ℓ²
    const ctx = makeContext(effectiveMassConfig(c, p));
    expect(ctx.units.E0 / PLANCK_H).toBeCloseTo(p.tunnelling * 0.532 ** 2, 9);
    // tunnelling_source: band uses a quarter of the Mathieu band width (lattice/bands.ts, A&S ch. 20)
    const b = latticeParameters(parseLatticeConfig(labText('{ wavelength_nm: 1064, depth_recoil: 10, tunnelling_source: band }'), 'x.yaml', '.'));
    expect(b.tunnelling).toBeCloseTo(lowestBand(10).tunnelling * erHz, 9);
    expect(b.warnings).toHaveLength(0);
  });
});

describe('runLattice and its outputs (src/jobs/lattice.ts)', () => {
  const dir = mkdtempSync(join(tmpdir(), 'isotrap-lattice-'));
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('builds the control tables, verifies on the lattice and writes JSON, .npy and CSV', () => {
    const c = parseLatticeConfig(naturalText, 'x.yaml', '.');
    const stages = new Set<string>();
    const r = runLattice(c, { onProgress: (p) => stages.add(p.stage) });
    expect([...stages]).toEqual(['design', 'tables', 'verify', 'study']);
    const s = r.summary;
    const h = 0.5, M = 100, S = 5;
    expect(s.lattice.sites).toBe(M);
    expect(s.scales.J_over_E0).toBeCloseTo(1 / (h * h), 12); // J = E₀ℓ²/d² (physics.md §6 with m* as the mass)
    // first sample (λ′ = 0): on-site u₀(x_j) + 2J, the tunnelling −J (amplitude J, phase π), no next-nearest term
    const x = r.tables.sites;
    for (const j of [0, 37, 50, 99]) expect(r.tables.onsite[j]).toBeCloseTo(-1.5 / Math.cosh(x[j] / 2) ** 2 + 2 / (h * h), 8);
    expect(r.tables.nnAmplitude[10]).toBeCloseTo(1 / (h * h), 12);
    expect(r.tables.nnPhase[10]).toBeCloseTo(Math.PI, 12);
    expect(r.tables.nnnAmplitude[10]).toBe(0);
    // middle sample: sin2 ramp rate λ′(T/2) = 2λ_end/T (quantum/ramp.ts formula), nnn coupling i·(−2λ′/h³)
    const rate = (2 * 2.4) / 4;
    expect(r.tables.nnnAmplitude[2 * (M - 2) + 5]).toBeCloseTo((2 * rate) / h ** 3, 9);
    expect(r.tables.nnnPhase[2 * (M - 2) + 5]).toBeCloseTo(-Math.PI / 2, 12);
    expect(s.couplings.largest_peierls_nnn).toBeCloseTo((2 * rate) / h ** 3, 9);
    expect(s.couplings.hermiticity_defect_max).toBeLessThan(1e-14);
    // CD holds the two bound states (−1 and −¼, Pöschl–Teller levels of the rescaled −6sech², physics.md §4) far
    // better than the bare drive; the continuum CD is exact (physics.md §1), the lattice error at 2 sites per width
    // is O(d⁴) ≈ 4e-3 (tests/lattice.test.ts measures the order)
    expect(s.verification.states).toBe(2);
    expect(s.verification.infidelity_cd_max).toBeLessThan(1e-2);
    expect(Math.min(...s.verification.fidelity_bare.map((f) => 1 - f))).toBeGreaterThan(0.5);
    expect(s.study.rows.map((row) => row.sites_per_width)).toEqual([1.5, 2]);
    // no studied lattice meets 1e-4, so the recommendation is extrapolated from the observed order
    expect(s.study.recommended?.basis).toMatch(/extrapolated/);
    expect(s.study.observed_order).toBeGreaterThan(3); // expected 4: O(k⁵d²) operator error (physics.md §6), squared

    const files = writeLatticeOutputs(r, dir, false, configIdentity(c));
    expect(files.map((f) => f.slice(dir.length + 1))).toEqual([...LATTICE_FILES]);
    const json = JSON.parse(readFileSync(join(dir, 'lattice.json'), 'utf8'));
    expect(json.units.energy).toBe('E₀');
    expect(json.files.shapes.nn).toEqual([S, M - 1]);
    const onsite = decodeNpy(readFileSync(join(dir, 'onsite.npy')), 'onsite.npy');
    expect(onsite.shape).toEqual([S, M]);
    expect(onsite.data[37]).toBe(r.tables.onsite[37]);
    const csv = readFileSync(join(dir, 'bonds.csv'), 'utf8').trim().split('\n');
    expect(csv[1]).toBe('site_i,site_j,t_t0,amplitude_E0,phase_rad');
    expect(csv.length).toBe(2 + S * (2 * M - 3));
    expect(() => writeLatticeOutputs(r, dir, false, configIdentity(c))).toThrow(/--force/);
  });
});
