import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { UserError } from '../src/core/errors.ts';
import { ATOMIC_MASS_CONSTANT, BOLTZMANN_K, HBAR, PLANCK_H } from '../src/units/constants.ts';
import { DISPERSION_EXPLANATION, dispersionNumber, energyScale, makeUnitSystem, type UnitSystem } from '../src/units/scales.ts';
import { resolveSpecies, SPECIES, SPECIES_NAMES, speciesMass } from '../src/units/species.ts';

function rel(a: number, b: number): number {
  return Math.abs(a - b) / Math.abs(b);
}

describe('constants', () => {
  it('match CODATA 2018', () => {
    // Tiesinga et al., CODATA 2018, Rev. Mod. Phys. 93, 025010 (2021), Table XXXI: h exact, k exact
    expect(PLANCK_H).toBe(6.62607015e-34);
    expect(BOLTZMANN_K).toBe(1.380649e-23);
    // same table: ħ = 1.054571817… × 10⁻³⁴ J s (10 significant digits printed)
    expect(rel(HBAR, 1.054571817e-34)).toBeLessThan(1e-9);
    // same table: m_u = 1.66053906660(50) × 10⁻²⁷ kg
    expect(ATOMIC_MASS_CONSTANT).toBe(1.6605390666e-27);
    // same table: k/h = 2.083661912… × 10¹⁰ Hz/K (exact ratio of two exact constants)
    expect(rel(BOLTZMANN_K / PLANCK_H, 2.083661912e10)).toBeLessThan(1e-9);
  });
});

describe('species', () => {
  // AME2020 atomic masses in u (M. Wang et al., Chinese Phys. C 45, 030003, 2021, Table I), from memory,
  // typed here independently of src/units/species.ts
  const AME2020: Record<string, number> = {
    Li6: 6.015122887,
    Li7: 7.016003434,
    Na23: 22.989769282,
    K39: 38.963706486,
    K40: 39.963998166,
    K41: 40.961825258,
    Rb87: 86.909180531,
    Sr88: 87.905612253,
    Cs133: 132.905451961,
    Yb174: 173.938867545,
  };
  it('tabulated masses equal the AME2020 values', () => {
    expect(SPECIES_NAMES.slice().sort()).toEqual(Object.keys(AME2020).sort());
    for (const [name, m] of Object.entries(AME2020)) expect(rel(speciesMass(name), m)).toBeLessThan(1e-11);
  });
  it('⁸⁷Rb equals the physics.md §3 value', () => {
    // /work/shared/physics.md §3: ⁸⁷Rb mass 86.909180531 u (AME2020)
    expect(speciesMass('Rb87')).toBe(86.909180531);
  });
  it('every mass is within 0.1 u of its mass number A', () => {
    // mass excess Δ = (M − A)·u: for stable nuclides up to A ≈ 180 |Δ| stays below 0.1 u ≈ 93 MeV
    // (AME2020 Table I; from memory: the most negative here is ¹³³Cs, Δ ≈ −88 MeV)
    for (const name of SPECIES_NAMES) {
      const s = SPECIES[name];
      expect(Math.abs(s.massU - s.massNumber)).toBeLessThan(0.1);
      expect(s.label).toContain(name.replace(/\d+/, '')); // label carries the element symbol (common practice)
    }
  });
  it('labels use superscript mass numbers', () => {
    // display convention ^A X (IUPAC Green Book, 3rd ed. 2007, §2.10)
    expect(SPECIES.Rb87.label).toBe('⁸⁷Rb');
    expect(SPECIES.Cs133.label).toBe('¹³³Cs');
    expect(SPECIES.Li6.label).toBe('⁶Li');
  });
  it('custom mass path and its kg value', () => {
    expect(speciesMass('custom', 12.5)).toBe(12.5);
    // m = 12 u × m_u (CODATA 2018 m_u = 1.66053906660e-27 kg)
    expect(rel(resolveSpecies('custom', 12).massKg, 12 * 1.6605390666e-27)).toBeLessThan(1e-15);
    expect(() => speciesMass('custom')).toThrow(UserError);
    expect(() => speciesMass('custom', -1)).toThrow(/mass_u = -1 is not allowed/);
  });
  it('unknown species lists the allowed names', () => {
    let err: unknown;
    try {
      speciesMass('Rb85');
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(UserError);
    const msg = (err as UserError).message;
    expect(msg).toContain('"Rb85"');
    for (const n of [...SPECIES_NAMES, 'custom']) expect(msg).toContain(n);
    expect((err as UserError).exitCode).toBe(2); // house rules: UserError default exit code 2
  });
});

describe('unit system', () => {
  const rb = resolveSpecies('Rb87');
  const lab = makeUnitSystem({ system: 'lab', massKg: rb.massKg, lengthUnitUm: 1, energy: 'h*kHz' });
  const labK = makeUnitSystem({ system: 'lab', massKg: rb.massKg, energy: 'uK' });
  const nat = makeUnitSystem({ system: 'natural' });

  it('⁸⁷Rb at ℓ = 1 µm: E₀/h ≈ 58.15 Hz and t₀ ≈ 2.737 ms', () => {
    // physics.md §3 example scale (CODATA 2018 ħ; AME2020 mass; ℓ = 1 µm)
    expect(lab.E0 / PLANCK_H).toBeCloseTo(58.15, 2);
    expect(lab.t0 * 1e3).toBeCloseTo(2.737, 3);
    // closed form E₀ = ħ²/(2mℓ²) with the printed CODATA 2018 ħ = 1.054571817e-34 J s
    const e0 = (1.054571817e-34 ** 2) / (2 * 86.909180531 * 1.6605390666e-27 * 1e-12);
    expect(rel(lab.E0, e0)).toBeLessThan(3e-9);
    // t₀ = ħ/E₀ = 2mℓ²/ħ (physics.md §3)
    expect(rel(lab.t0, (2 * rb.massKg * 1e-12) / HBAR)).toBeLessThan(1e-14);
    expect(lab.ell).toBe(1e-6);
  });

  it('E₀ scales as 1/(m ℓ²)', () => {
    // E₀ = ħ²/(2mℓ²) (physics.md §3): doubling ℓ divides E₀ by 4, t₀ multiplies by 4
    const l2 = makeUnitSystem({ system: 'lab', massKg: rb.massKg, lengthUnitUm: 2, energy: 'h*kHz' });
    expect(rel(l2.E0, lab.E0 / 4)).toBeLessThan(1e-14);
    expect(rel(l2.t0, lab.t0 * 4)).toBeLessThan(1e-14);
    const li = resolveSpecies('Li6');
    expect(rel(energyScale(li.massKg, 1e-6), (lab.E0 * rb.massU) / li.massU)).toBeLessThan(1e-14);
  });

  it('lab conversions give the expected numbers', () => {
    const e0Hz = lab.E0 / PLANCK_H;
    // 1 h·kHz = 1000 Hz / (E₀/h) in E₀ (definition of u = V/E₀, physics.md §3)
    expect(rel(lab.energyToNatural(1), 1000 / e0Hz)).toBeLessThan(1e-14);
    // 1 µK·k_B = 20 836.61912 h·Hz (CODATA 2018 k/h = 2.083661912e10 Hz/K)
    expect(rel(labK.energyToNatural(1), 20836.61912 / e0Hz)).toBeLessThan(1e-9);
    // 1 nK: k_B T/E₀ = 20.83661912 Hz / (E₀/h)
    expect(rel(lab.temperatureToNatural(1), 20.83661912 / e0Hz)).toBeLessThan(1e-9);
    // 1 ms = 1e-3 s / t₀
    expect(rel(lab.timeToNatural(1), 1e-3 / lab.t0)).toBeLessThan(1e-14);
    // 1 µm = 1 ℓ for ℓ = 1 µm
    expect(lab.lengthToNatural(3.5)).toBeCloseTo(3.5, 14);
    // velocity 1 µm/ms = 1e-3 m/s → (t₀/ℓ)·1e-3 m/s ≈ 2.737 ℓ/t₀ (physics.md §3 t₀)
    expect(lab.velocityToNatural(1)).toBeCloseTo(2.737, 3);
    // and it is the ratio of the length and time conversions (dimensional analysis)
    expect(rel(lab.velocityToNatural(1), lab.lengthToNatural(1) / lab.timeToNatural(1))).toBeLessThan(1e-14);
  });

  it('labels', () => {
    // unit labels required by the output format (project brief)
    expect(lab.labels).toEqual({ length: 'µm', energy: 'h·kHz', time: 'ms', temperature: 'nK', velocity: 'µm/ms' });
    expect(labK.labels.energy).toBe('µK');
    expect(nat.labels).toEqual({ length: 'ℓ', energy: 'E₀', time: 't₀', temperature: 'E₀', velocity: 'ℓ/t₀' });
    expect([nat.E0, nat.t0, nat.ell, nat.massKg]).toEqual([1, 1, 1, null]);
  });

  const pairs = (s: UnitSystem): [(v: number) => number, (v: number) => number][] => [
    [s.lengthToNatural, s.lengthFromNatural],
    [s.energyToNatural, s.energyFromNatural],
    [s.timeToNatural, s.timeFromNatural],
    [s.temperatureToNatural, s.temperatureFromNatural],
    [s.velocityToNatural, s.velocityFromNatural],
  ];

  it('every conversion round trips (lab and natural)', () => {
    const l3 = makeUnitSystem({ system: 'lab', massKg: resolveSpecies('K40').massKg, lengthUnitUm: 0.532, energy: 'uK' });
    for (const s of [lab, labK, l3, nat]) {
      for (const [to, from] of pairs(s)) {
        // x → natural → x is the identity up to two roundings (IEEE 754 multiply/divide, 2 ulp);
        // subnormal inputs are excluded, they carry fewer significant bits (IEEE 754-2019 §3.4)
        fc.assert(
          fc.property(fc.double({ min: -1e6, max: 1e6, noNaN: true }).filter((v) => v === 0 || Math.abs(v) > 1e-290), (v) => {
            const back = from(to(v));
            expect(Math.abs(back - v)).toBeLessThanOrEqual(4 * Number.EPSILON * Math.abs(v));
          }),
          { numRuns: 200 },
        );
      }
    }
    // natural units: conversions are the identity (physics.md §3, the input is already ξ, u, s)
    for (const [to] of pairs(nat)) expect(to(1.25)).toBe(1.25);
  });

  it('dispersion number δ² = 1/(u₀ω²) equals ħ²/(2mV₀w²) in SI', () => {
    // physics.md §3: δ² = ħ²/(2mV₀w²); ⁸⁷Rb, V₀ = h·1 kHz, w = 1 µm computed directly in SI
    const v0 = PLANCK_H * 1e3;
    const w = 1e-6;
    const si = (HBAR * HBAR) / (2 * rb.massKg * v0 * w * w);
    const nd = dispersionNumber(lab.energyToNatural(1), lab.lengthToNatural(1));
    expect(rel(nd, si)).toBeLessThan(1e-13);
    // and ≈ (58.15 Hz)/(1000 Hz) from the physics.md §3 E₀
    expect(nd).toBeCloseTo(0.05815, 4);
    // -N(N+1) sech² ξ with N = 2 (physics.md §4): depth 6, width 1 → δ² = 1/6
    expect(dispersionNumber(6, 1)).toBeCloseTo(1 / 6, 15);
    expect(DISPERSION_EXPLANATION).toMatch(/δ²/);
  });
});
