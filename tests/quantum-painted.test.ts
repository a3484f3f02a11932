import { describe, expect, it } from 'vitest';
import { makeGrid } from '../src/spectral/grid.ts';
import { cumulativeIntegral } from '../src/spectral/cumulative.ts';
import { ChebyshevSeries, chebyshevIntegral, chebyshevPoints, PiecewiseChebyshev } from '../src/spectral/chebyshev.ts';
import { makeRamp } from '../src/protocol/ramp.ts';
import { twoSolitonFromSech2 } from '../src/flow/solitons.ts';
import { lowestEigenpairs } from '../src/quantum/eigen.ts';
import { complexFromReal } from '../src/linalg/complex.ts';
import { eigenspaceFidelity } from '../src/quantum/observables.ts';
import { emptyTerms } from '../src/quantum/hamiltonian.ts';
import { propagate } from '../src/quantum/propagator.ts';
import {
  assertPaintableRamp, gaugeCheck, groundStateField, localPotential, paintedDrive, RampNotPaintableError, type VelocityField,
} from '../src/quantum/painted.ts';

describe('cumulative integral and Chebyshev interpolation (spectral/cumulative.ts, spectral/chebyshev.ts)', () => {
  it('∫₀^ξ sech² = tanh ξ to 1e-8 at 8.5 points per unit width (closed form)', () => {
    const grid = makeGrid(30, 256);
    const f = grid.x.map((x) => 1 / Math.cosh(x) ** 2);
    const out = cumulativeIntegral(f, grid.dx, new Float64Array(256), 128);
    let err = 0;
    grid.x.forEach((x, j) => { err = Math.max(err, Math.abs(out[j] - Math.tanh(x))); });
    expect(err).toBeLessThan(1e-8);
  });

  it('Chebyshev: e^t, its first and second derivatives and ∫ on [0.2, 1.7] at degree 24 (closed forms)', () => {
    const a = 0.2, b = 1.7;
    const pts = chebyshevPoints(a, b, 24);
    const s = ChebyshevSeries.fromSamples(a, b, pts.map((t) => Float64Array.of(Math.exp(t))));
    const d1 = s.derivative(), d2 = d1.derivative();
    const o = new Float64Array(1), b1 = new Float64Array(1), b2 = new Float64Array(1);
    for (const t of [0.2, 0.77, 1.7]) {
      expect(Math.abs(s.evaluate(t, o, b1, b2)[0] - Math.exp(t))).toBeLessThan(1e-13);
      expect(Math.abs(d1.evaluate(t, o, b1, b2)[0] - Math.exp(t))).toBeLessThan(1e-10);
      expect(Math.abs(d2.evaluate(t, o, b1, b2)[0] - Math.exp(t))).toBeLessThan(1e-8);
    }
    expect(Math.abs(chebyshevIntegral(a, b, pts.map(Math.exp)) - (Math.exp(b) - Math.exp(a)))).toBeLessThan(1e-13);
  });

  it('piecewise re-expansion: Runge 1/(1 + 25t²) and sin 20t on [−1, 1] from a degree-256 series, to the closed forms', () => {
    // Runge's function: its degree-256 Chebyshev interpolant converges geometrically (Trefethen 2013, ch. 8); the
    // pieces reproduce the series, so both match the closed forms to the series' own accuracy
    const f = (t: number) => Float64Array.of(1 / (1 + 25 * t * t), Math.sin(20 * t));
    const s = ChebyshevSeries.fromSamples(-1, 1, chebyshevPoints(-1, 1, 256).map(f));
    const pw = PiecewiseChebyshev.of(s, 1e-14)!;
    expect(pw.count).toBeGreaterThan(1);
    const o = new Float64Array(2), b1 = new Float64Array(2), b2 = new Float64Array(2);
    let err = 0;
    for (let i = 0; i <= 400; i++) {
      const t = -1 + i / 200;
      const e = f(t);
      pw.evaluate(t, o, b1, b2);
      err = Math.max(err, Math.abs(o[0] - e[0]), Math.abs(o[1] - e[1]));
    }
    expect(err).toBeLessThan(1e-12);
  });
});

describe('painted potential of a momentum-linear correction (quantum/painted.ts, physics.md §7)', () => {
  const grid = makeGrid(24, 256);
  const n = grid.n;

  it('harmonic trap ω(λ) = 1 + λ²: k² + ω²ξ²/4 + V_loc of g = −(ω_λ/2ω)ξ is harmonic with Ω² = ω² − 3ω̇²/(4ω²) + ω̈/(2ω) to 1e-8 (Ibáñez et al., PRL 109, 100403, 2012, eq. 4)', () => {
    // the CD term −(ω̇/4ω){x, p} (Muga et al., J. Phys. B 43, 085509, 2010) is λ̇·½{g, k} with g = −(ω_λ/2ω)ξ
    const om = (l: number): number => 1 + l * l, omL = (l: number): number => 2 * l, omLL = 2;
    const ramp = makeRamp('sin2', 1.3, 1);
    const g = new Float64Array(n), gl = new Float64Array(n), v = new Float64Array(n);
    for (const s of [0.2, 0.65, 1.1]) {
      const l = ramp.value(s), r = ramp.rate(s), acc = ramp.accel(s), w = om(l);
      grid.x.forEach((x, j) => {
        g[j] = (-omL(l) / (2 * w)) * x;
        gl[j] = -(omLL / (2 * w) - (omL(l) * omL(l)) / (2 * w * w)) * x;
      });
      localPotential(grid, g, gl, r, acc, v);
      const wd = omL(l) * r, wdd = omLL * r * r + omL(l) * acc;
      const big = w * w - (3 * wd * wd) / (4 * w * w) + wdd / (2 * w);
      let err = 0;
      grid.x.forEach((x, j) => { err = Math.max(err, Math.abs(w * w * x * x / 4 + v[j] - big * x * x / 4)); });
      expect(err / (big * 12 * 12 / 4)).toBeLessThan(1e-8);
    }
  });

  it('transport at a smooth acceleration: g = ẋ₀/λ̇ gives the linear potential −m ẍ₀ ξ = −½ẍ₀ξ to 1e-8 (common practice: the accelerated frame)', () => {
    // x₀(λ) = sin λ, so ẋ₀ = cos λ · λ̇, ẍ₀ = −sin λ · λ̇² + cos λ · λ̈
    const ramp = makeRamp('smooth', 2, 1.5);
    const g = new Float64Array(n), gl = new Float64Array(n), v = new Float64Array(n);
    for (const s of [0.3, 1, 1.7]) {
      const l = ramp.value(s), r = ramp.rate(s), acc = ramp.accel(s);
      g.fill(Math.cos(l));
      gl.fill(-Math.sin(l));
      localPotential(grid, g, gl, r, acc, v);
      const xdd = -Math.sin(l) * r * r + Math.cos(l) * acc;
      let err = 0;
      grid.x.forEach((x, j) => { err = Math.max(err, Math.abs(v[j] + 0.5 * xdd * x)); });
      expect(err / (0.5 * Math.abs(xdd) * 12)).toBeLessThan(1e-8);
    }
  });

  it('a linear ramp is refused naming the ramp and the reason λ̇ ≠ 0 at the start; sin2 and smooth pass (closed forms in protocol/ramp.ts)', () => {
    const linear = makeRamp('linear', 2, 1);
    expect(() => assertPaintableRamp(linear)).toThrow(RampNotPaintableError);
    try {
      assertPaintableRamp(linear);
    } catch (e) {
      const err = e as RampNotPaintableError;
      expect(err.ramp).toBe('linear');
      expect(err.reason).toMatch(/λ̇ = 0\.5 ≠ 0 at the start/);
      expect(err.message).toMatch(/ramp "linear" cannot be painted/);
    }
    const field: VelocityField = { grid, at: (_l, g, gl) => { g.fill(1); gl.fill(0); } };
    expect(() => paintedDrive(grid, (_l, out) => out.fill(0), field, linear)).toThrow(RampNotPaintableError);
    // a ramp λ = 3r² − 2r³ (λ̇ = 0 but λ̈ = 6/T² ≠ 0 at r = 0, closed form) is refused for λ̈
    const cubic = { ...makeRamp('smooth', 2, 1), rate: (s: number) => (6 * (s / 2) * (1 - s / 2)) / 2, accel: (s: number) => (6 - 12 * (s / 2)) / 4 };
    expect(() => assertPaintableRamp(cubic)).toThrow(/λ̈ = 1\.4999\d* ≠ 0 at the start/);
    expect(() => assertPaintableRamp(makeRamp('sin2', 2, 1))).not.toThrow();
    expect(() => assertPaintableRamp(makeRamp('smooth', 2, 1))).not.toThrow();
  });

  it('the painted drive is a pure potential: no k, k³ or {w, k} terms; equal to u at both ends (physics.md §7)', () => {
    const ramp = makeRamp('smooth', 1, 1);
    const field: VelocityField = { grid, at: (l, g, gl) => { g.fill(1 + l); gl.fill(1); } };
    const H = paintedDrive(grid, (_l, out) => out.fill(-1), field, ramp);
    const t = emptyTerms();
    for (const s of [0, 0.4, 1]) {
      H.terms(s, t);
      expect([t.c1, t.c2, t.c3, t.w, t.b]).toEqual([0, 1, 0, null, 0]);
      if (s !== 0.4) expect(Math.max(...(t.v as Float64Array).map((x) => Math.abs(x + 1)))).toBe(0);
    }
  });
});

describe('one-state exact painted field of the ground state (quantum/painted.ts)', () => {
  it('harmonic ground state: the continuity field is g = −(ω_λ/2ω)ξ and the painted trap has Ω² (Ibáñez et al., PRL 109, 100403, 2012) to 1e-8 where |ξ| < 3', () => {
    const grid = makeGrid(24, 256);
    const om = (l: number): number => 1 + l;
    const pot = (l: number, out: Float64Array): void => { grid.x.forEach((x, j) => { out[j] = (om(l) ** 2 * x * x) / 4; }); };
    const field = groundStateField(grid, pot, 0, 1);
    const ramp = makeRamp('smooth', 2, 1);
    const g = new Float64Array(grid.n), gl = new Float64Array(grid.n), v = new Float64Array(grid.n);
    for (const s of [0.3, 1.5]) {
      const l = ramp.value(s), r = ramp.rate(s), acc = ramp.accel(s), w = om(l);
      field.at(l, g, gl);
      localPotential(grid, g, gl, r, acc, v);
      const big = w * w - (3 * r * r) / (4 * w * w) + acc / (2 * w);
      let err = 0;
      grid.x.forEach((x, j) => { if (Math.abs(x) < 3) err = Math.max(err, Math.abs(w * w * x * x / 4 + v[j] - big * x * x / 4)); });
      expect(err / (big * 9 / 4)).toBeLessThan(1e-8);
    }
  });

  // two-soliton split of −6 sech²ξ (Drazin & Johnson, Solitons: an Introduction, 1989; physics.md §4), N = 256,
  // τ ∈ [0, 0.1] over T = 0.3 t₀: the bare ramp loses most of the ground state (measured infidelity 0.92)
  const grid = makeGrid(24, 256);
  const split = (tau: number, out: Float64Array): void => { grid.x.forEach((x, j) => { out[j] = twoSolitonFromSech2(x, tau); }); };
  const ramp = makeRamp('smooth', 0.3, 0.1);
  const field = groundStateField(grid, split, 0, 0.1);

  it('a clip floor outside (0, 1) is a RangeError naming the value', () => {
    expect(() => groundStateField(grid, split, 0, 0.1, { clipFloor: 0 })).toThrow(/clipFloor = 0 must be in \(0, 1\)/);
  });

  it('two-soliton split: the painted potential alone keeps the ground state to 1 − 1e-6; the clip costs about its clipped weight (common practice)', () => {
    const u = new Float64Array(grid.n);
    split(0, u);
    const start = lowestEigenpairs(grid, u, 1);
    split(0.1, u);
    const end = lowestEigenpairs(grid, u, 1);
    const res = propagate(paintedDrive(grid, split, field, ramp), [complexFromReal(start.vectors[0])], 0, 0.3);
    const infidelity = 1 - eigenspaceFidelity(res.states[0], end.vectors, [0]);
    expect(infidelity).toBeLessThan(1e-6);
    // measured: infidelity ≈ 1.5 × clippedWeight (7e-10 at CLIP_FLOOR = 1e-9)
    expect(field.clippedWeight).toBeGreaterThan(0);
    expect(field.clippedWeight).toBeLessThan(1e-8);
  });

  it('gauge check: painted and ½{g, p} drives give the same final fidelities of both bound states to 1e-8 (physics.md §7)', () => {
    // time-stepping budget well below the compared difference (the default 1e-8 is the difference itself)
    const check = gaugeCheck({ grid, potential: split, field, ramp, states: 2, propagate: { tol: 1e-11 } });
    expect(check.velocity[0]).toBeGreaterThan(1 - 1e-6);
    expect(check.maxDifference).toBeLessThan(1e-8);
  });
});
