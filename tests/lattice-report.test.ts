import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { UserError } from '../src/core/errors.ts';
import { parseLatticeConfig } from '../src/io/config-lattice.ts';
import { readLatticeFile } from '../src/io/formats/lattice.ts';
import { configIdentity, readManifest } from '../src/io/run-folder.ts';
import { LATTICE_FILES, runLattice, writeLatticeOutputs, type LatticeResult } from '../src/jobs/lattice.ts';
import { renderFolder } from '../src/jobs/report.ts';
import { COMMON_LATTICE_WAVELENGTHS_NM, latticeAdvice, MIN_TIGHT_BINDING_DEPTH, NEAR_RESONANCE_NM, STRONG_LINES_NM, usableWavelengths } from '../src/lattice/advice.ts';
import { lowestBand } from '../src/lattice/bands.ts';
import { recoilFrequency } from '../src/lattice/params.ts';
import { latticeFigures, latticeSummaryRows, sig } from '../src/report/panels/lattice.ts';
import { ATOMIC_MASS_CONSTANT } from '../src/units/constants.ts';
import { speciesMass } from '../src/units/species.ts';

// an illustrative ⁸⁷Rb scenario (invented): a narrow well on a 1064 nm lattice of depth 12 E_R, about two sites per
// soliton width, so the study asks for a finer lattice
const text = `
name: rb-narrow-lattice
units: { system: lab, species: Rb87, length_unit_um: 1, energy: h*kHz }
grid: { length: 40, points: 256 }
initial: { kind: sech2, depth: 0.01, width: 2, center: 0 }
flow: { dispersion: quantum, lambda_end: 0.5, frames: 3 }
protocol: { duration: 20, ramp: sin2 }
lattice: { wavelength_nm: 1064, depth_recoil: 12, sites_per_width: [3, 4], target_infidelity: 5e-4, samples: 5, states: 1 }
`;

const RB87_KG = speciesMass('Rb87') * ATOMIC_MASS_CONSTANT;
const row = (rows: ReturnType<typeof latticeSummaryRows>, key: string) => rows.find((r) => r.key === key)?.value;

describe('lattice report, figures and advice (jobs/lattice.ts, jobs/report.ts, report/panels/lattice.ts, lattice/advice.ts)', () => {
  const dir = mkdtempSync(join(tmpdir(), 'isotrap-lattice-report-'));
  let r: LatticeResult;
  beforeAll(() => {
    r = runLattice(parseLatticeConfig(text, 'x.yaml', '.'));
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('the printed summary gives the band J and, beside it, the deep-lattice estimate with their difference', () => {
    const s = r.summary;
    const d = s.lattice.depth!;
    expect(s.lattice.tunnelling_source).toBe('band');
    expect(s.lattice.tunnelling).toBeCloseTo(d.band_hz, 9);
    // E_R/h = h/(8md²) (common practice); J = (b₁ − a₀)/4 · E_R (physics.md §6; lattice/bands.ts)
    expect(d.band_hz / (lowestBand(12).tunnelling * recoilFrequency(0.532e-6, RB87_KG)) - 1).toBeLessThan(1e-12);
    const rows = latticeSummaryRows(s);
    expect(row(rows, 'tunnelling J')).toBe(`${sig(d.band_hz)} h·Hz (band structure: a quarter of the lowest Mathieu band width)`);
    expect(row(rows, 'deep-lattice estimate of J')).toContain(`${sig(d.estimate_hz)} h·Hz (+${sig(100 * d.relative_difference, 3)} % against the band value ${sig(d.band_hz)} h·Hz)`);
  });

  it('writes report.html through the run folder (recorded in the manifest), and isotrap report renders the folder again', () => {
    const files = writeLatticeOutputs(r, dir, false, configIdentity(parseLatticeConfig(text, 'x.yaml', '.')));
    expect(files).toHaveLength(LATTICE_FILES.length);
    const written = renderFolder(dir, { force: false, toolVersion: 'test', kind: 'lattice' });
    expect(written.map((f) => f.slice(dir.length + 1)).sort()).toEqual(['lattice-convergence.svg', 'lattice-couplings.svg', 'report.html']);
    const manifest = readManifest(dir);
    expect(manifest.files['report.html'].job).toBe('report');
    expect(manifest.files['report.html'].config_hash).toBe(manifest.files['lattice.json'].config_hash);
    expect(manifest.files['report.html'].run).toBe(manifest.files['lattice.json'].run);
    const html = readFileSync(join(dir, 'report.html'), 'utf8');
    expect(html).toContain('isotrap lattice: rb-narrow-lattice');
    expect(html).toContain('deep-lattice estimate of J');
    expect(html).toContain('depth_recoil: 12'); // the config as run
    // `isotrap report DIR` (no kind): dispatches on lattice.json; existing outputs are refused without --force
    expect(() => renderFolder(dir, { force: false, toolVersion: 'test' })).toThrow(UserError);
    expect(renderFolder(dir, { force: true, toolVersion: 'test' })).toHaveLength(3);
    expect(existsSync(join(dir, 'lattice-convergence.svg'))).toBe(true);
    expect(readLatticeFile(join(dir, 'lattice.json')).study.choices).toEqual(r.summary.study.choices);
  });

  it('figures: the colour bar is named in words with its unit; the convergence figure marks the configured lattice with the summary’s numbers', () => {
    const s = r.summary;
    const [couplings, convergence] = latticeFigures(s, r.tables);
    expect(couplings.svg).toContain('tunnelling amplitude |J_j,j+1| (h·Hz)');
    expect(couplings.svg).not.toContain('|H_j,j+1|');
    // the configured lattice is a marked point at its own sites per width and worst infidelity
    const own = convergence.svg.match(/data-series="configured lattice \(worst state\)"[^>]*data-xmin="([^"]+)"[^>]*data-ymin="([^"]+)"/);
    expect(own).not.toBeNull();
    expect(Number(own![1])).toBe(s.soliton_width.sites_per_width);
    expect(Number(own![2])).toBe(s.verification.infidelity_cd_max);
    // captions and summary quote the same numbers
    const rows = latticeSummaryRows(s);
    expect(row(rows, 'sites')).toContain(`${sig(s.soliton_width.sites_per_width)} per soliton width`);
    expect(convergence.caption).toContain(`${sig(s.soliton_width.sites_per_width)} sites per width, worst infidelity ${sig(s.verification.infidelity_cd_max, 3)}`);
    expect(row(rows, 'lattice infidelity with correction')).toContain(sig(s.verification.infidelity_cd_max, 3));
    expect(row(rows, 'largest tunnelling amplitude |J_j,j+1|')).toBe(sig(s.couplings.largest_nn_amplitude));
    expect(couplings.caption).toContain(`largest ${sig(s.couplings.largest_nn_amplitude)} h·Hz`);
    // the colour bar's quantity: its largest value is the summary's largest amplitude
    expect(Math.max(...r.tables.nnAmplitude)).toBeCloseTo(s.couplings.largest_nn_amplitude, 9);
  });

  it('prints the widening with units and offers light, lattice depth and trap-and-ramp choices that each reach the needed sites per width', () => {
    const s = r.summary;
    const needed = s.study.recommended!.sites_per_width;
    const configured = s.soliton_width.sites_per_width;
    expect(needed).toBeGreaterThan(configured);
    const f = needed / configured;
    expect(s.study.widen_trap_by).toBeCloseTo(f, 12);
    const rows = latticeSummaryRows(s);
    expect(row(rows, 'widen the trap by')).toMatch(new RegExp(`^× ${sig(f).replace('.', '\\.')} \\(factor on every length of the trap, dimensionless`));
    const kinds = s.study.choices.map((c) => c.kind);
    expect(kinds).toEqual(['wavelength', 'lattice_depth', 'trap_and_ramp']);
    for (const c of s.study.choices) {
      if (c.kind === 'wavelength') {
        // only listed light, none within NEAR_RESONANCE_NM of a line of ⁸⁷Rb; d = λ/2 (common practice)
        expect(COMMON_LATTICE_WAVELENGTHS_NM).toContain(c.wavelength_nm);
        for (const line of STRONG_LINES_NM.Rb87) expect(Math.abs(c.wavelength_nm - line)).toBeGreaterThanOrEqual(NEAR_RESONANCE_NM);
        expect(s.soliton_width.value / (c.wavelength_nm / 2000)).toBeGreaterThanOrEqual(needed);
        // same s: J/E_R unchanged, so m* (∝ E_R/J / d², physics.md §6) and the design are unchanged
        expect(c.depth_recoil).toBeCloseTo(12, 6);
        expect(c.tunnelling_hz / recoilFrequency((c.wavelength_nm / 2) * 1e-9, RB87_KG)).toBeCloseTo(s.lattice.tunnelling / s.lattice.depth!.recoil_hz, 12);
      } else if (c.kind === 'lattice_depth') {
        // J × f² from the band at the new depth (m* ÷ f²), trap lengths × f: sites per width × f
        expect(c.depth_recoil).toBeGreaterThanOrEqual(MIN_TIGHT_BINDING_DEPTH);
        expect(lowestBand(c.depth_recoil).tunnelling * s.lattice.depth!.recoil_hz / (s.lattice.tunnelling * f * f) - 1).toBeLessThan(1e-9);
        expect(configured * c.widen_trap_by).toBeGreaterThanOrEqual(needed * (1 - 1e-12));
      } else if (c.kind === 'trap_and_ramp') {
        // KdV scaling u → ε²u(εξ, ε³τ), ε = 1/f (Drazin & Johnson 1989, §1.2)
        expect(configured * c.widen_trap_by).toBeGreaterThanOrEqual(needed * (1 - 1e-12));
        expect(c.depth_factor).toBeCloseTo(1 / (f * f), 12);
        expect(c.duration_factor).toBeCloseTo(f * f, 12);
        expect(c.lambda_end_factor).toBeCloseTo(f ** 3, 12);
      }
    }
    const texts = rows.filter((x) => x.key.startsWith('choice ')).map((x) => String(x.value));
    expect(texts[0]).toMatch(/^532 nm light \(d = 0\.266 µm\) at the same depth s = 12 E_R/);
    // every spacing in the advice comes with the light that makes it (d = λ/2): no bare spacing
    expect(texts.join('\n').replace(/\d+ nm light \(d = [\d.]+ µm\)/g, '')).not.toContain('µm');
    expect(row(rows, 'not offered')).toMatch(/780 nm \(line at 780\.2 nm\), 795 nm \(line at 795 nm\)/);
  });
});

describe('lattice advice without a run (src/lattice/advice.ts)', () => {
  it('leaves out light near a line of the atom and names species without listed lines', () => {
    // ⁴⁰K D lines at 766.7 and 770.1 nm (from memory, NIST ASD): 780 and 795 nm are within 30 nm
    expect(usableWavelengths('K40').usable).toEqual([532, 1064, 1550]);
    expect(usableWavelengths('Cs133').usable).toEqual([...COMMON_LATTICE_WAVELENGTHS_NM]); // 795 is 57 nm from 852.3
    const custom = latticeAdvice(4, 2, 1, { species: 'custom', massKg: RB87_KG, widthUm: 1, spacingUm: 0.532, tunnellingHz: 50 });
    expect(custom.notes.join(' ')).toMatch(/no lines are listed for species custom/);
  });

  it('natural units: a spacing in ℓ and the trap-and-ramp scaling; nothing when the lattice suffices', () => {
    const a = latticeAdvice(6, 4, 1.2, null);
    expect(a.choices[0]).toMatchObject({ kind: 'spacing', sites_per_width: 6 });
    if (a.choices[0].kind === 'spacing') expect(a.choices[0].spacing_l).toBeCloseTo(0.2, 15); // w/n = 1.2/6
    expect(a.choices[1]).toMatchObject({ kind: 'trap_and_ramp', widen_trap_by: 1.5, duration_factor: 2.25 });
    expect(latticeAdvice(4, 6, 1.2, null).choices).toEqual([]);
  });
});
