import { describe, expect, it } from 'vitest';
import { orbitAction, gaussLegendre } from '../src/classical/action.ts';
import { cdHamiltonian, phaseSpaceCheck, shellStarts, suggestSteps, wellShape } from '../src/classical/cd.ts';
import { analyticProfile, FourierProfile, sech2Profile, staticSequence } from '../src/classical/field.ts';
import { BreakingError, characteristicsSequence, hopfBreaking, hopfCharacteristics } from '../src/classical/hopf.ts';
import { integrateTrajectories, phaseState, type PhaseHamiltonian } from '../src/classical/symplectic.ts';
import { integrateFlow, naturalFlowEquation } from '../src/flow/kdv.ts';
import { makeRamp } from '../src/protocol/ramp.ts';
import { makeGrid } from '../src/spectral/grid.ts';

const sech2 = (z: number) => 1 / Math.cosh(z) ** 2;

describe('Hopf flow by characteristics (src/classical/hopf.ts)', () => {
  const depth = 2, width = 1.5;
  const grid = makeGrid(40, 1024);
  const u0 = grid.x.map((x) => -depth * sech2(x / width));
  // closed-form first breaking of u₀ = −d sech²(x/w): max u₀′ = (2d/w)·2/(3√3) at tanh = 1/√3, so
  // τ_b = 1/max(6u₀′) = √3 w/(8d) (physics.md §4 formula; the maximum by elementary calculus, common practice)
  const tauB = (Math.sqrt(3) * width) / (8 * depth);

  it('pseudo-spectral flow with β = 0 matches the characteristics solution u = u₀(ξ + 6uτ) before breaking', () => {
    // independent methods: Fourier/exponential Runge–Kutta (flow/kdv.ts) against the method of characteristics
    // (Whitham, Linear and Nonlinear Waves, 1974, §2.1; physics.md §4)
    const frames = [0.25 * tauB, 0.5 * tauB]; // well resolved on this grid (the front sharpens as 1/(1 − τ/τ_b))
    const run = integrateFlow(grid, naturalFlowEquation('classical'), u0, { tolerance: 1e-11, frames, detectBreaking: false });
    const profile = sech2Profile(depth, width);
    frames.forEach((tau, i) => {
      const exact = hopfCharacteristics(profile, grid.x, tau);
      let err = 0;
      for (let j = 0; j < grid.n; j++) err = Math.max(err, Math.abs(run.frames[i][j] - exact[j]));
      expect(err / depth).toBeLessThan(1e-8);
    });
  });

  it('characteristics from grid samples (Fourier interpolant) agree with the closed-form profile', () => {
    // the same characteristics solution built from analytic u₀ and from its samples (Trefethen 2000, ch. 3)
    const a = hopfCharacteristics(sech2Profile(depth, width), grid.x, 0.7 * tauB);
    const b = hopfCharacteristics(new FourierProfile(grid, u0), grid.x, 0.7 * tauB);
    let err = 0;
    for (let j = 0; j < grid.n; j++) err = Math.max(err, Math.abs(a[j] - b[j]));
    expect(err).toBeLessThan(1e-11);
  });

  it('breaking λ: 1/max(6∂ξu₀) refined on the grid and the flow’s own extrapolation both give √3w/(8d)', () => {
    const b = hopfBreaking(grid, u0);
    expect(Math.abs(b.lambda - tauB) / tauB).toBeLessThan(1e-10); // closed form above
    expect(Math.abs(b.position - width * Math.atanh(1 / Math.sqrt(3)))).toBeLessThan(1e-8); // tanh(x/w) = 1/√3 (steepest point)
    const run = integrateFlow(grid, naturalFlowEquation('classical'), u0, { tolerance: 1e-10, frames: [2 * tauB] });
    expect(run.breaking).not.toBeNull();
    expect(run.breaking!.lambdaReached).toBeLessThan(tauB);
    expect(Math.abs(run.breaking!.lambdaExtrapolated - tauB) / tauB).toBeLessThan(1e-2);
    // past breaking the characteristics cross and the solver refuses
    expect(() => hopfCharacteristics(sech2Profile(depth, width), grid.x, 1.05 * tauB)).toThrow(BreakingError);
  });
});

describe('exact Hopf sequence as a field (src/classical/hopf.ts characteristicsSequence)', () => {
  it('satisfies u_λ = 6uu_x and its x-derivatives match central differences', () => {
    // the Hopf equation itself (physics.md §4) and second-order central differences (common practice)
    const depth = 2, width = 1.5;
    const tauB = (Math.sqrt(3) * width) / (8 * depth);
    const f = characteristicsSequence(sech2Profile(depth, width));
    const a = new Float64Array(4), b = new Float64Array(4), c = new Float64Array(4);
    const h = 1e-5;
    for (const x of [-1.2, 0.3, 0.9, 2.5]) {
      const lam = 0.7 * tauB;
      f.select(lam + h); f.evaluate(x, a);
      f.select(lam - h); f.evaluate(x, b);
      f.select(lam); f.evaluate(x, c);
      expect(Math.abs((a[0] - b[0]) / (2 * h) - 6 * c[0] * c[1])).toBeLessThan(1e-6);
      f.evaluate(x + h, a);
      f.evaluate(x - h, b);
      for (let d = 0; d < 3; d++) expect(Math.abs((a[d] - b[d]) / (2 * h) - c[d + 1])).toBeLessThan(1e-6 * (1 + Math.abs(c[d + 1])));
    }
  });
});

describe('turning-point action quadrature (src/classical/action.ts)', () => {
  it('Gauss–Legendre weights integrate x⁸ exactly on [−1, 1]', () => {
    // ∫x⁸ = 2/9 (exact for n ≥ 5; Abramowitz & Stegun 25.4.29)
    const { nodes, weights } = gaussLegendre(12);
    let s = 0;
    for (let i = 0; i < 12; i++) s += weights[i] * nodes[i] ** 8;
    expect(s).toBeCloseTo(2 / 9, 14);
  });

  it('harmonic oscillator p² + ω²x²/4 (m = ½): J = 2πE/ω', () => {
    // common practice check of the quadrature: J = 2πE/ω (Landau & Lifshitz, Mechanics, §49–§50)
    const omega = 1.7;
    const u = analyticProfile((x, o) => { o[0] = (omega * omega * x * x) / 4; o[1] = (omega * omega * x) / 2; o[2] = (omega * omega) / 2; o[3] = 0; }, 0, 100);
    for (const E of [0.3, 1, 4]) {
      const r = orbitAction(u, 0.1, E, 0.01, -50, 50);
      expect(Math.abs(r.action - (2 * Math.PI * E) / omega) / r.action).toBeLessThan(1e-13);
    }
  });

  it('sech² well −V₀sech²(x/w): J = 2πw√(2m)(√V₀ − √(−E)) with 2m = 1', () => {
    // closed form: the period in U = −U₀/cosh²(αx) is T = (π/α)√(2m/|E|) (Landau & Lifshitz, Mechanics, §11
    // problem 2 — from memory); with dJ/dE = T and J(−V₀) = 0 this integrates to J = 2πw√(2m)(√V₀ − √(−E))
    // (common practice); the E → −V₀ limit of T is the small-oscillation period πw/√V₀ of p² + u
    const V0 = 6, w = 1.3;
    const u = sech2Profile(V0, w, 0.4);
    for (const E of [-5.5, -3, -0.5]) {
      const r = orbitAction(u, 0.4, E, 0.01, -40, 40);
      const exact = 2 * Math.PI * w * (Math.sqrt(V0) - Math.sqrt(-E));
      expect(Math.abs(r.action - exact) / exact).toBeLessThan(1e-11);
    }
  });
});

/** p² + u(x) for a static profile */
function staticHamiltonian(field: ReturnType<typeof staticSequence>): PhaseHamiltonian {
  const ramp = { value: () => 0, rate: () => 0, duration: 1 };
  return cdHamiltonian(field, ramp, 0);
}

describe('Yoshida-4 implicit midpoint integrator (src/classical/symplectic.ts)', () => {
  it('energy error on a static sech² well scales as dt⁴', () => {
    // order of Yoshida's triple jump of a symmetric 2nd-order method: 4 (Yoshida, Phys. Lett. A 150, 262, 1990)
    const field = staticSequence(sech2Profile(6, 1));
    const ham = staticHamiltonian(field);
    const buf = new Float64Array(6);
    const errs: number[] = [];
    const T = 6;
    for (const steps of [150, 300, 600]) {
      const s = phaseState(1);
      s.x[0] = 0.2;
      s.p[0] = 1.5;
      ham.prepare(0);
      ham.derivatives(s.x[0], s.p[0], buf);
      const E0 = buf[0];
      let m = 0;
      integrateTrajectories(ham, s, 0, T, steps, { observe: (_t, st) => { ham.derivatives(st.x[0], st.p[0], buf); m = Math.max(m, Math.abs(buf[0] - E0)); } });
      errs.push(m);
    }
    const slope1 = Math.log2(errs[0] / errs[1]);
    const slope2 = Math.log2(errs[1] / errs[2]);
    expect(slope1).toBeGreaterThan(3.8);
    expect(slope1).toBeLessThan(4.3);
    expect(slope2).toBeGreaterThan(3.8);
    expect(slope2).toBeLessThan(4.3);
  });

  it('harmonic trap with changing frequency under its exact CD term keeps the action 2πH₀/ω to 1e-8', () => {
    // exact CD term −(ω̇/4ω)(xp + px), classical symbol −(ω̇/2ω)xp (Muga, Chen, Ibáñez, Lizuain & Ruschhaupt,
    // J. Phys. B 43, 085509, 2010); action of p² + ω²x²/4 is 2πH₀/ω (Landau & Lifshitz, Mechanics, §50)
    const w0 = 2, w1 = 0.8, T = 3;
    const ramp = makeRamp('smooth', T, 1);
    const omega = (t: number) => w0 + (w1 - w0) * ramp.value(t);
    const omegaDot = (t: number) => (w1 - w0) * ramp.rate(t);
    let w = w0, c = 0;
    const ham: PhaseHamiltonian = {
      prepare(t) {
        w = omega(t);
        c = -omegaDot(t) / (2 * w);
      },
      derivatives(x, p, o) {
        o[0] = p * p + (w * w * x * x) / 4 + c * x * p;
        o[1] = (w * w * x) / 2 + c * p;
        o[2] = 2 * p + c * x;
        o[3] = (w * w) / 2;
        o[4] = c;
        o[5] = 2;
      },
    };
    const s = phaseState(3);
    [[1, 0], [0.3, 1.2], [-2, 0.5]].forEach(([x, p], i) => { s.x[i] = x; s.p[i] = p; });
    const J = (x: number, p: number, om: number) => {
      const E = p * p + (om * om * x * x) / 4;
      const u = analyticProfile((y, o) => { o[0] = (om * om * y * y) / 4; o[1] = (om * om * y) / 2; o[2] = (om * om) / 2; o[3] = 0; }, 0, 100);
      return orbitAction(u, x, E, 0.01, -100, 100).action;
    };
    const start = Array.from({ length: 3 }, (_, i) => J(s.x[i], s.p[i], w0));
    const end = integrateTrajectories(ham, s, 0, T, 2000);
    for (let i = 0; i < 3; i++) {
      const after = J(end.x[i], end.p[i], w1);
      expect(Math.abs(after - start[i]) / start[i]).toBeLessThan(1e-8);
    }
    // without the CD term the action is not kept (the ramp is not adiabatic): the test can fail
    const bare: PhaseHamiltonian = { prepare: ham.prepare, derivatives: (x, p, o) => { ham.derivatives(x, p, o); o[0] -= c * x * p; o[1] -= c * p; o[2] -= c * x; o[4] = 0; } };
    ham.prepare(0);
    const endBare = integrateTrajectories({ prepare: (t) => { w = omega(t); c = -omegaDot(t) / (2 * w); }, derivatives: bare.derivatives }, s, 0, T, 2000);
    const drift = Math.max(...[0, 1, 2].map((i) => Math.abs(J(endBare.x[i], endBare.p[i], w1) - start[i]) / start[i]));
    expect(drift).toBeGreaterThan(1e-3);
  });
});

describe('classical CD Hamiltonian along a Hopf sequence (src/classical/cd.ts)', () => {
  const depth = 2, width = 1.5;
  const tauB = (Math.sqrt(3) * width) / (8 * depth); // closed-form breaking, see above
  const field = characteristicsSequence(sech2Profile(depth, width));
  const xs = Float64Array.from({ length: 400 }, (_, j) => -20 + j * 0.1);
  const ramp = makeRamp('sin2', 4, 0.8 * tauB);

  it('instantaneous energies p² + u(x, λ) and actions stay constant with σ = +1, drift with σ = −1', () => {
    // ∂_λH = {A, H} for A = −4p³ − 6up and u_λ = 6uu_x (physics.md §2–§3, Weyl symbol of −(4k³ + 3{u,k}))
    field.select(0);
    const starts = shellStarts(field, xs, 3, 2);
    expect(starts.length).toBe(6);
    const steps = suggestSteps(wellShape(field, xs), ramp);
    const opts = { xMin: -20, xMax: 20, scanStep: 0.02, steps };
    const good = phaseSpaceCheck(field, ramp, starts, { ...opts, sign: 1 });
    const bad = phaseSpaceCheck(field, ramp, starts, { ...opts, sign: -1 });
    for (const t of good.trajectories) {
      expect(t.energyDriftMax / depth).toBeLessThan(1e-8); // integrator accuracy (common practice)
      expect(t.actionDriftMax).toBeLessThan(1e-7);
    }
    // reversed correction: dH₀/ds = 2λ′u_λ ≠ 0, so the energies move by a visible amount
    const worst = Math.max(...bad.trajectories.map((t) => t.energyDriftMax));
    expect(worst / depth).toBeGreaterThan(1e-2);
  });
});
