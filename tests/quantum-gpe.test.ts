import { describe, expect, it } from 'vitest';
import { NumericalError } from '../src/core/errors.ts';
import { complexFromReal } from '../src/linalg/complex.ts';
import { gpeEnergy, gpeEvolve, gpeGroundState, gpeNorm } from '../src/quantum/gpe.ts';
import { makeGrid, type Grid } from '../src/spectral/grid.ts';
import { realFFT, spectrum } from '../src/spectral/ops.ts';

// Natural units of physics.md §3 (ħ = 1, m = ½, ℓ = 1, E₀ = 1): H = k² + u + g|ψ|², ∫|ψ|² dξ = 1, g = g₁D N/(E₀ℓ)
// (physics.md §10). A lab harmonic trap ½mω²x² is u = ω²ξ²/4 with ω in units of 1/t₀.

/** harmonic trap u = ω²ξ²/4 centred at c */
function trap(grid: Grid, omega: number, c = 0): Float64Array {
  return grid.x.map((x) => (omega * omega * (x - c) ** 2) / 4);
}

/** |ψ_j|² of an interleaved complex state */
function density(psi: Float64Array): Float64Array {
  const n = psi.length / 2;
  const d = new Float64Array(n);
  for (let j = 0; j < n; j++) d[j] = psi[2 * j] ** 2 + psi[2 * j + 1] ** 2;
  return d;
}

/** ∫ξ|ψ|² dξ */
function centre(grid: Grid, psi: Float64Array): number {
  const d = density(psi);
  let s = 0;
  for (let j = 0; j < grid.n; j++) s += grid.x[j] * d[j];
  return s * grid.dx;
}

/** f(ξ − a) of a periodic band-limited f, by the Fourier shift theorem (common practice) */
function shifted(grid: Grid, f: Float64Array, a: number): Float64Array {
  const s = spectrum(f);
  for (let m = 0; m <= grid.n / 2; m++) {
    const ph = -grid.kHalf[m] * a;
    const c = Math.cos(ph), sn = Math.sin(ph);
    const re = s[2 * m], im = s[2 * m + 1];
    s[2 * m] = c * re - sn * im;
    s[2 * m + 1] = c * im + sn * re;
  }
  const out = new Float64Array(grid.n);
  realFFT(grid.n).inverse(s, out);
  return out;
}

const maxAbsDiff = (a: ArrayLike<number>, b: ArrayLike<number>): number => Array.from(a, (v, j) => Math.abs(v - b[j])).reduce((m, d) => Math.max(m, d), 0);

describe('GPE ground state: the linear limit', () => {
  it('g = 0 in a harmonic trap gives E = μ = ω/2 from a displaced guess (Landau & Lifshitz, QM §23)', () => {
    const omega = 1.5;
    const grid = makeGrid(30, 256);
    const r = gpeGroundState(grid, trap(grid, omega), 0, { guess: grid.x.map((x) => Math.exp(-((x - 1) ** 2))) });
    expect(r.residual).toBeLessThanOrEqual(1e-10);
    expect(Math.abs(r.energy - omega / 2)).toBeLessThan(1e-9); // closed form ħω/2 = ω/2 (E₀)
    expect(Math.abs(r.mu - omega / 2)).toBeLessThan(1e-9); // μ = E when g = 0
  });

  it('g = 0 in u = −6 sech²ξ gives E = −4 (Pöschl–Teller; Landau & Lifshitz, QM §23; physics.md §4)', () => {
    const grid = makeGrid(40, 256);
    const u = grid.x.map((x) => -6 / Math.cosh(x) ** 2);
    const r = gpeGroundState(grid, u, 0, { guess: grid.x.map((x) => Math.exp(-x * x)) });
    expect(Math.abs(r.energy + 4)).toBeLessThan(1e-9); // E₀ = −(N − 0)² with N = 2
  });

  it('small g: first-order perturbation E = ω/2 + (g/2)∫ψ₀⁴, μ = ω/2 + g∫ψ₀⁴, ∫ψ₀⁴ = ½√(ω/π) (Landau & Lifshitz, QM §38; default guess)', () => {
    const omega = 1;
    const g = 1e-3;
    const grid = makeGrid(30, 256);
    const r = gpeGroundState(grid, trap(grid, omega), g);
    // ψ₀² = √(ω/2π) e^{−ωξ²/2} (the oscillator ground state with m = ½), so ∫ψ₀⁴ = (ω/2π)√(π/ω) = ½√(ω/π)
    const q = 0.5 * Math.sqrt(omega / Math.PI);
    // the second-order terms are O(g²) ≈ 1e-6 × a coefficient below 0.1
    expect(Math.abs(r.energy - (omega / 2 + (g / 2) * q))).toBeLessThan(1e-7);
    expect(Math.abs(r.mu - (omega / 2 + g * q))).toBeLessThan(1e-7);
    // the first-order shift itself is resolved (the test would fail with g dropped)
    expect(Math.abs(r.mu - omega / 2)).toBeGreaterThan(1e-4);
  });
});

describe('GPE ground state on a fine grid', () => {
  it('N = 2048 on L = 30: the residual budget follows the round-off floor (floorFactor) and E = ω/2 at g = 0 (Landau & Lifshitz, QM §23)', () => {
    // k_max² = (π·2048/30)² ≈ 4.6e4: the floor 8ε k_max² ≈ 8e-11 lies above the default 1e-10 budget's reach
    const omega = 1.5;
    const grid = makeGrid(30, 2048);
    expect(() => gpeGroundState(grid, trap(grid, omega), 0, { residualTol: 1e-11 })).toThrow(NumericalError);
    const r = gpeGroundState(grid, trap(grid, omega), 0, { residualTol: 1e-11, floorFactor: 4 });
    expect(Math.abs(r.energy - omega / 2)).toBeLessThan(1e-9);
  });
});

describe('GPE ground state: Thomas–Fermi limit', () => {
  it('μ = (3gω/8)^{2/3} and the inverted-parabola density at μ ≈ 50ω, to 1 % (Pitaevskii & Stringari, Bose–Einstein Condensation, 2003; physics.md §10)', () => {
    // physics.md §10: μ = (3 g₁D N ω √m / (4√2))^{2/3}, n(x) = (μ − ½mω²x²)/g₁D with n = N|ψ|².
    // Natural units: m = ½, ħ = 1, g₁D N → g, ½mω²x² → ω²ξ²/4. Then 3gω√(1/2)/(4√2) = 3gω/8, so
    //     μ_TF = (3gω/8)^{2/3},  |ψ|² = (μ − ω²ξ²/4)/g  for |ξ| < R = 2√μ/ω.
    // Check: ∫_{−R}^{R} (μ − ω²ξ²/4)/g dξ = (4/3)μR/g = (8/3)μ^{3/2}/(gω) = 1, the normalisation of physics.md §10.
    // Kinetic corrections to μ are O((ω/μ)² ln(μ/ω)) ≈ 2e-3 here (from memory).
    const omega = 1;
    const g = 943;
    const grid = makeGrid(44, 512);
    const r = gpeGroundState(grid, trap(grid, omega), g);
    const muTF = Math.pow((3 * g * omega) / 8, 2 / 3);
    expect(muTF).toBeGreaterThan(45);
    expect(Math.abs(r.mu / muTF - 1)).toBeLessThan(0.01);
    const R = (2 * Math.sqrt(muTF)) / omega;
    const peak = muTF / g;
    let worst = 0;
    for (let j = 0; j < grid.n; j++) {
      const x = grid.x[j];
      if (Math.abs(x) > 0.8 * R) continue;
      worst = Math.max(worst, Math.abs(r.psi[j] ** 2 - (muTF - (omega * omega * x * x) / 4) / g));
    }
    expect(worst / peak).toBeLessThan(0.01);
  });
});

describe('GPE bright soliton (attractive, u = 0)', () => {
  // physics.md §10 (Zakharov & Shabat, Sov. Phys. JETP 34, 62, 1972): ψ = (2ξ_s)^{−1/2} sech(x/ξ_s),
  // ξ_s = 2ħ²/(m|g₁D|N), μ = −ħ²/(2mξ_s²). Natural units (ħ = 1, m = ½): ξ_s = 4/|g|, μ = −1/ξ_s² = −g²/16.
  // E = μ − (g/2)∫|ψ|⁴ with ∫sech⁴(ξ/ξ_s) dξ = 4ξ_s/3 (elementary integral), so E = −1/ξ_s² + |g|/(6ξ_s) = −g²/48.
  const g = -3;
  const width = 4 / Math.abs(g);
  const grid = makeGrid(64, 256); // L/ξ_s = 48: the periodic images overlap by ~e^{−48}
  const exact = grid.x.map((x) => 1 / Math.sqrt(2 * width) / Math.cosh(x / width));
  const ground = gpeGroundState(grid, new Float64Array(grid.n), g, { guess: grid.x.map((x) => Math.exp(-(x * x) / 8)) });

  it('the ground-state solver finds ψ = (2ξ_s)^{−1/2} sech(ξ/ξ_s), μ = −g²/16, E = −g²/48 from a Gaussian guess', () => {
    expect(maxAbsDiff(ground.psi, exact)).toBeLessThan(1e-9);
    expect(Math.abs(ground.mu + (g * g) / 16)).toBeLessThan(1e-9);
    expect(Math.abs(ground.energy + (g * g) / 48)).toBeLessThan(1e-9);
    expect(Math.abs(gpeEnergy(grid, new Float64Array(grid.n), g, complexFromReal(exact)) + (g * g) / 48)).toBeLessThan(1e-9);
  });

  it('is stationary under real-time propagation: ψ(s) = e^{−iμs}ψ(0), density unchanged to 1e-8', () => {
    const s = 4;
    const psi0 = complexFromReal(ground.psi);
    const ev = gpeEvolve(grid, new Float64Array(grid.n), g, psi0, 0, s);
    expect(maxAbsDiff(density(ev.psi), density(psi0))).toBeLessThan(1e-8);
    // the phase of a stationary state turns at the rate μ (i∂_sψ = μψ)
    const c = Math.cos(-ground.mu * s), sn = Math.sin(-ground.mu * s);
    let worst = 0;
    for (let j = 0; j < grid.n; j++) {
      const re = c * ground.psi[j], im = sn * ground.psi[j];
      worst = Math.max(worst, Math.hypot(ev.psi[2 * j] - re, ev.psi[2 * j + 1] - im));
    }
    expect(worst).toBeLessThan(1e-8);
  });
});

describe('GPE real-time propagation', () => {
  it('a displaced condensate (g = 10) oscillates as ⟨ξ⟩ = d cos ωs; norm and energy conserved to 1e-9 (harmonic-potential theorem: Dobson, PRL 73, 2244, 1994)', () => {
    const omega = 1;
    const g = 10;
    const d = 2;
    const grid = makeGrid(32, 256);
    const u = trap(grid, omega);
    // the ground state of the trap centred at d, released into the trap centred at 0
    const start = gpeGroundState(grid, trap(grid, omega, d), g, { guess: grid.x.map((x) => Math.exp(-((x - d) ** 2) / 2)) });
    let psi = complexFromReal(start.psi);
    const e0 = gpeEnergy(grid, u, g, psi);
    let s = 0;
    for (const next of [0.7, 1.9, 3.1, 4.4]) {
      psi = gpeEvolve(grid, u, g, psi, s, next).psi;
      s = next;
      expect(Math.abs(gpeNorm(grid, psi) - 1)).toBeLessThan(1e-9);
      expect(Math.abs(gpeEnergy(grid, u, g, psi) - e0)).toBeLessThan(1e-9);
      // the centre of mass moves as a classical particle of mass ½ in ω²ξ²/4, whatever g
      expect(Math.abs(centre(grid, psi) - d * Math.cos(omega * s))).toBeLessThan(1e-8);
    }
  });

  it('a condensate in a shaken trap u = ω²(ξ − a(s))²/4 is the ground state translated along the forced classical path (harmonic-potential theorem: Dobson, PRL 73, 2244, 1994)', () => {
    const omega = 1;
    const g = 10;
    const amp = 1.5, nu = 0.7;
    const grid = makeGrid(32, 256);
    const ground = gpeGroundState(grid, trap(grid, omega), g, { guess: grid.x.map((x) => Math.exp(-(x * x) / 2)) });
    const potential = (s: number, out: Float64Array): void => {
      const a = amp * Math.sin(nu * s);
      for (let j = 0; j < grid.n; j++) out[j] = (omega * omega * (grid.x[j] - a) ** 2) / 4;
    };
    const s1 = 3;
    const ev = gpeEvolve(grid, potential, g, complexFromReal(ground.psi), 0, s1);
    // ẍ = −ω²(x − a(s)), x(0) = ẋ(0) = 0, a = A sin νs: x = ω²A/(ω² − ν²)·(sin νs − (ν/ω) sin ωs)
    const xc = ((omega * omega * amp) / (omega * omega - nu * nu)) * (Math.sin(nu * s1) - (nu / omega) * Math.sin(omega * s1));
    const expected = shifted(grid, ground.psi.map((p) => p * p), xc);
    expect(Math.abs(centre(grid, ev.psi) - xc)).toBeLessThan(1e-8);
    expect(maxAbsDiff(density(ev.psi), expected)).toBeLessThan(1e-8);
    expect(Math.abs(gpeNorm(grid, ev.psi) - 1)).toBeLessThan(1e-9);
  });
});

describe('GPE budgets', () => {
  it('an unmet residual budget is a NumericalError naming the residual and the budget (common practice)', () => {
    const grid = makeGrid(30, 128);
    const u = trap(grid, 1);
    const guess = grid.x.map((x) => Math.exp(-((x - 2) ** 2)));
    expect(() => gpeGroundState(grid, u, 5, { guess, maxIterations: 3 })).toThrow(NumericalError);
    expect(() => gpeGroundState(grid, u, 5, { guess, maxIterations: 3 })).toThrow(/after 3 gradient-flow iterations, budget 1e-10/);
    expect(() => gpeGroundState(grid, u, 5, { guess, residualTol: 1e-18 })).toThrow(/round-off floor/);
  });
});
