/**
 * Admissibility by fitting the KdV flow between frames (src/check/flowfit.ts, physics.md §9) and the monotone
 * lab-time map (src/check/timemap.ts).
 *
 * Measured (2-core machine shared with other jobs, single thread, flow tolerance 1e-11):
 *   two-soliton, N = 512, 21 frames:   max residual 4.3e-8, max |Δτ − 0.025| 1.3e-12, max |c| 8e-10; 0.45 s/interval
 *                                       (the N = 512 frames reach beyond the flow's 2/3 band: run on 1024 points)
 *   two-soliton with c = −6:           max residual 2.8e-8, Δτ error 3.8e-12, relative drift error 6e-11
 *   one soliton, free drift:           residual ≤ 1.8e-10, displacement error 1.7e-13 relative, speed 2e-15
 *   one soliton, drift given:          Δτ error 5.5e-15
 *   sin² ramp, N = 1024:               max residual 1.5e-8, max |τ(t_k) − exact| 9e-12, λ̇ error 8.2e-3 of its peak
 *   frame 5 of 11 deepened by 1 %:     residuals 9.6e-3 and 1.0e-2 on intervals 4 and 5, ≤ 2.9e-8 elsewhere
 *   harmonic trap:                     residual 1.0 (nothing of the change is explained), 1.9 s/interval
 *   two-soliton, N = 1024, 41 frames:  0.15 s/interval, 6.0 s in total on one core (max residual 4.5e-10)
 * Whole file: about 25 s.
 */
import { describe, expect, it } from 'vitest';
import { brentMinimize, fitInterval, fitSequence } from '../src/check/flowfit.ts';
import { monotoneTimeMap } from '../src/check/timemap.ts';
import { oneSoliton, twoSolitonFromSech2 } from '../src/flow/solitons.ts';
import { makeGrid } from '../src/spectral/grid.ts';

const grid = makeGrid(60, 512);
/** frame of the Drazin & Johnson (Solitons: an Introduction, 1989) two-soliton from −6 sech²ξ, translated by cτ */
const twoSoliton = (tau: number, drift = 0) => grid.x.map((x) => twoSolitonFromSech2(x - drift * tau, tau));
const uniform = (end: number, count: number) => Array.from({ length: count }, (_, i) => (end * i) / (count - 1));

describe('KdV flow fit between frames', () => {
  it('exact two-soliton, 21 frames over τ ∈ [0, 0.5]: every interval passes with Δτ = 0.025', () => {
    // Drazin & Johnson 1989 closed form (physics.md §4): consecutive frames are exactly 0.025 apart in τ, drift 0
    const fit = fitSequence(grid, uniform(0.5, 21).map((t) => twoSoliton(t)), { passTolerance: 1e-6 });
    expect(fit.admissible).toBe(true);
    expect(fit.intervals).toHaveLength(20);
    for (const it of fit.intervals) {
      expect(it.residual).toBeLessThanOrEqual(1e-6);
      expect(Math.abs(it.dtau - 0.025)).toBeLessThan(1e-6);
      expect(Math.abs(it.drift)).toBeLessThan(1e-6);
      expect(it.degenerate).toBeNull();
    }
    expect(fit.tau[20]).toBeCloseTo(0.5, 6);
  });

  it('two-soliton with a drift c = −6: Δτ and c both recovered', () => {
    // Drazin & Johnson 1989 closed form evaluated at ξ − cτ: u = w(ξ − cτ, τ) solves u_τ = 6uu_ξ − u_ξξξ − cu_ξ
    const fit = fitSequence(grid, uniform(0.3, 4).map((t) => twoSoliton(t, -6)), { passTolerance: 1e-6 });
    expect(fit.admissible).toBe(true);
    for (const it of fit.intervals) {
      expect(Math.abs(it.dtau - 0.1)).toBeLessThan(1e-6);
      expect(Math.abs(it.drift + 6) / 6).toBeLessThan(1e-6);
    }
  });

  describe('one soliton with a drift: only the displacement (4κ² + c)Δτ is determined', () => {
    // one soliton −2κ² sech²(κ(ξ − 4κ²τ − ξ₀)) (physics.md §4) translated by cτ: its KdV motion is itself a
    // translation at speed 4κ², so Δτ and c are degenerate
    const kappa = 1.5, c = -3, dtau = 0.025;
    const frames = uniform(19 * dtau, 20).map((t) => grid.x.map((x) => oneSoliton(kappa, -5, x - c * t, t)));

    it('free fit: admissible, degeneracy reported, speed 4κ² and displacement (4κ² + c)Δτ; c follows from a known Δτ', () => {
      const fit = fitSequence(grid, frames, { passTolerance: 1e-6 });
      expect(fit.admissible).toBe(true);
      expect(fit.degenerateIntervals).toHaveLength(19);
      for (const it of fit.intervals) {
        const motion = it.degenerate;
        expect(motion).not.toBeNull();
        if (!motion) continue;
        expect(Math.abs(motion.speed - 4 * kappa ** 2) / (4 * kappa ** 2)).toBeLessThan(1e-9);
        const displacement = (4 * kappa ** 2 + c) * dtau;
        expect(Math.abs(motion.displacement - displacement) / displacement).toBeLessThan(1e-6);
        // with the time map known (Δτ = 0.025), the drift is displacement/Δτ − speed
        expect(Math.abs(motion.displacement / dtau - motion.speed - c) / Math.abs(c)).toBeLessThan(1e-6);
      }
    });

    it('with the drift given, Δτ is recovered', () => {
      const fit = fitSequence(grid, frames, { passTolerance: 1e-6, fixedDrift: c });
      expect(fit.admissible).toBe(true);
      expect(fit.degenerateIntervals).toHaveLength(0);
      for (const it of fit.intervals) expect(Math.abs(it.dtau - dtau) / dtau).toBeLessThan(1e-6);
    });
  });

  it('uneven spacing from a sin² ramp: τ(t_k) recovered and λ̇(t) from the time map', () => {
    // τ(t) = τ_end (r − sin(2πr)/2π), r = t/T, dτ/dt = (τ_end/T)(1 − cos 2πr) (closed form, physics.md §4 frames)
    const tauEnd = 0.5, T = 10;
    const tauOf = (t: number) => tauEnd * (t / T - Math.sin((2 * Math.PI * t) / T) / (2 * Math.PI));
    const rateOf = (t: number) => (tauEnd / T) * (1 - Math.cos((2 * Math.PI * t) / T));
    // N = 1024: near the ramp's ends the frames barely change, and at N = 512 the frames' own sampling error
    // (2e-8 of ‖u‖ at τ > 0.25) is 2.5e-6 of that change in the last interval (samplingFloor reports it)
    const fine = makeGrid(60, 1024);
    const times = uniform(T, 21);
    const frames = times.map((t) => fine.x.map((x) => twoSolitonFromSech2(x, tauOf(t))));
    const fit = fitSequence(fine, frames, { passTolerance: 1e-6 });
    expect(fit.admissible).toBe(true);
    times.forEach((t, k) => expect(Math.abs(fit.tau[k] - tauOf(t))).toBeLessThan(1e-6));
    const map = monotoneTimeMap(times, fit.tau);
    let worst = 0;
    for (let i = 0; i <= 400; i++) worst = Math.max(worst, Math.abs(map.rate((T * i) / 400) - rateOf((T * i) / 400)));
    // measured 8.2e-3 of the peak rate 2τ_end/T: the Hermite derivative with three-point slopes is O(h²), h = T/20
    expect(worst / ((2 * tauEnd) / T)).toBeLessThan(1e-2);
  });

  it('one frame deepened by 1 %: exactly the two intervals touching it fail', () => {
    // Drazin & Johnson 1989 frames with frame 5 scaled by 1.01: no KdV time reaches or leaves it
    const frames = uniform(0.5, 11).map((t) => twoSoliton(t));
    frames[5] = frames[5].map((v) => 1.01 * v);
    const fit = fitSequence(grid, frames, { passTolerance: 1e-6 });
    expect(fit.admissible).toBe(false);
    expect(fit.failed).toEqual([4, 5]);
    for (const k of [4, 5]) expect(fit.intervals[k].residual).toBeGreaterThan(1e-3);
  });

  it('a harmonic trap u = ω(τ)² ξ² with changing ω is not a KdV flow: fails', () => {
    // u_τ = 6uu_ξ − u_ξξξ turns ω²ξ² into 12ω⁴ξ³τ + …, never into another parabola (common practice argument)
    const frames = [0.1, 0.105, 0.11].map((w) => grid.x.map((x) => w * w * x * x));
    const fit = fitSequence(grid, frames, { passTolerance: 1e-6 });
    expect(fit.admissible).toBe(false);
    expect(fit.failed).toEqual([0, 1]);
    for (const it of fit.intervals) expect(it.residual).toBeGreaterThan(0.5);
  });

  it('static frames: Δτ = 0 exactly, residual 0', () => {
    // Φ₀ is the identity (definition of a flow)
    const u = twoSoliton(0.1);
    const fit = fitInterval(grid, u, Float64Array.from(u));
    expect(fit.static).toBe(true);
    expect(fit.dtau).toBe(0);
    expect(fit.residual).toBe(0);
  });
});

describe('helpers', () => {
  it('Brent minimiser finds the minimum of x³ − 2x − 5 at √(2/3)', () => {
    // closed form: f′ = 3x² − 2 = 0; the example of fmin in Forsythe, Malcolm & Moler, Computer Methods for
    // Mathematical Computations (1977), ch. 8 (from memory)
    const f = (x: number) => x * x * x - 2 * x - 5;
    const r = brentMinimize(f, 0, 1, 0.5, f(0.5), 1e-10, 1e-12, 100);
    expect(Math.abs(r.x - Math.sqrt(2 / 3))).toBeLessThan(1e-8);
  });

  it('time map: exact on a linear τ(t), monotone on a flat step, refuses a decreasing τ', () => {
    // a cubic Hermite interpolant with exact slopes reproduces a line (closed form); Fritsch & Carlson 1980,
    // SIAM J. Numer. Anal. 17, 238: data with a flat part stay monotone and flat there
    const lin = monotoneTimeMap([0, 1, 3, 4], [0, 0.5, 1.5, 2]);
    expect(lin.tau(2.2)).toBeCloseTo(1.1, 14);
    expect(lin.rate(3.7)).toBeCloseTo(0.5, 14);
    const step = monotoneTimeMap([0, 1, 2, 3, 4], [0, 0, 0, 1, 1]);
    let prev = -Infinity;
    for (let i = 0; i <= 400; i++) {
      const v = step.tau(i / 100);
      expect(v).toBeGreaterThanOrEqual(prev - 1e-15);
      prev = v;
    }
    expect(step.tau(1.5)).toBe(0);
    expect(() => monotoneTimeMap([0, 1, 2], [0, 0.2, 0.1])).toThrow(RangeError);
  });
});
