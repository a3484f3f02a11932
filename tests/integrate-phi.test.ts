import { describe, expect, it } from 'vitest';
import { etdContourMeans, phiImaginary } from '../src/integrate/phi.ts';
import { etdrk4Coefficients, etdrk4ImaginaryCoefficients, etdrk4Step, etdrk4Table, etdrk4Workspace, type Etdrk4Coefficients } from '../src/integrate/etdrk4.ts';
import { MAX_FACTOR, MIN_FACTOR, SAFETY, errorExponent, stepFactor } from '../src/integrate/controller.ts';

describe('φ-functions: contour mean (Kassam & Trefethen 2005) against series / closed form (Hochbruck & Ostermann 2010)', () => {
  // the two forms are independent evaluations of the same entire functions; ETDRK4 combinations
  // Q = ½φ₁(z/2), f₁ = φ₁ − 3φ₂ + 4φ₃, f₂ = φ₂ − 2φ₃, f₃ = 4φ₃ − φ₂ (Cox & Matthews 2002, eq. 26–29)
  for (const theta of [0, 1e-6, 0.3, -0.99, 1.01, 2.5, -7, 25]) {
    it(`agree to 1e-13 at z = ${theta}i`, () => {
      const contour = new Float64Array(8);
      etdContourMeans(0, theta, 1, contour);
      const p = new Float64Array(6);
      const ph = new Float64Array(6);
      phiImaginary(theta, p);
      phiImaginary(theta / 2, ph);
      const series = [
        ph[0] / 2, ph[1] / 2,
        p[0] - 3 * p[2] + 4 * p[4], p[1] - 3 * p[3] + 4 * p[5],
        p[2] - 2 * p[4], p[3] - 2 * p[5],
        4 * p[4] - p[2], 4 * p[5] - p[3],
      ];
      for (let i = 0; i < 8; i++) expect(Math.abs(contour[i] - series[i])).toBeLessThan(1e-13);
    });
  }

  it('φ_j(0) = 1/j! (definition φ_j(z) = Σ zⁿ/(n + j)!, Hochbruck & Ostermann 2010, eq. 2.10)', () => {
    const p = new Float64Array(6);
    phiImaginary(0, p);
    expect(p[0]).toBe(1);
    expect(Math.abs(p[2] - 1 / 2)).toBeLessThan(1e-16);
    expect(Math.abs(p[4] - 1 / 6)).toBeLessThan(1e-16);
    expect(p[1]).toBe(0);
  });
});

describe('ETDRK4 step (Cox & Matthews 2002) against closed-form solutions', () => {
  const lim = Float64Array.from([0, 0.7, -3, 40]);
  const h = 0.3;
  const tables: Array<[string, Etdrk4Coefficients]> = [['contour', etdrk4Coefficients(h, lim)]];
  const imag = etdrk4Table(lim.length);
  etdrk4ImaginaryCoefficients(h, lim, imag, new Float64Array(6));
  tables.push(['series', imag]);

  for (const [name, co] of tables) {
    it(`${name}: y' = iωy + c is integrated exactly: y(h) = e^{iωh}y + (e^{iωh} − 1)/(iω)·c (variation of constants)`, () => {
      const m = lim.length;
      const y = Float64Array.from({ length: 2 * m }, (_, i) => 0.3 + 0.1 * i);
      const c = Float64Array.from({ length: 2 * m }, (_, i) => 1 - 0.2 * i);
      const rhs = (_y: Float64Array, out: Float64Array): void => out.set(c);
      const out = new Float64Array(2 * m);
      etdrk4Step(co, rhs, y, c, out, etdrk4Workspace(m));
      for (let j = 0; j < m; j++) {
        const w = lim[j];
        const er = Math.cos(w * h), ei = Math.sin(w * h);
        // (e^{iωh} − 1)/(iω) = (sin ωh − i(cos ωh − 1))/ω, → h as ω → 0
        const gr = w === 0 ? h : ei / w, gi = w === 0 ? 0 : -(er - 1) / w;
        const exr = er * y[2 * j] - ei * y[2 * j + 1] + gr * c[2 * j] - gi * c[2 * j + 1];
        const exi = er * y[2 * j + 1] + ei * y[2 * j] + gr * c[2 * j + 1] + gi * c[2 * j];
        expect(Math.hypot(out[2 * j] - exr, out[2 * j + 1] - exi)).toBeLessThan(1e-13);
      }
    });
  }

  it('stage times 0, h/2, h/2, h: with L = 0 and N = t the step gives y(h) = y(0) + h²/2 (classical RK4 limit, exact for quadratics)', () => {
    const co = etdrk4Coefficients(h, new Float64Array(1));
    const nodes = [0, 0.5, 0.5, 1];
    const rhs = (_y: Float64Array, out: Float64Array, stage: number): void => {
      out[0] = nodes[stage] * h;
      out[1] = 0;
    };
    const y = Float64Array.from([2, 0]);
    const nv = new Float64Array(2);
    rhs(y, nv, 0);
    const out = new Float64Array(2);
    etdrk4Step(co, rhs, y, nv, out, etdrk4Workspace(1));
    expect(Math.abs(out[0] - (2 + (h * h) / 2))).toBeLessThan(1e-14);
  });
});

describe('step-size controller (Hairer, Nørsett & Wanner, Solving ODEs I, 1993, §II.4, eq. 4.13)', () => {
  it('factor = SAFETY·ratio^(−1/(p+1)), clipped to [MIN_FACTOR, MAX_FACTOR]', () => {
    expect(errorExponent(4)).toBe(1 / 5);
    expect(errorExponent(4, true)).toBe(1 / 4);
    expect(stepFactor(1, 1 / 5)).toBeCloseTo(SAFETY, 15); // ratio 1: only the safety factor
    expect(stepFactor(2 ** -5, 1 / 5)).toBeCloseTo(2 * SAFETY, 14); // error 32× below tolerance: step ×2 for order 4
    expect(stepFactor(0, 1 / 5)).toBe(MAX_FACTOR);
    expect(stepFactor(1e6, 1 / 5)).toBe(MIN_FACTOR);
    expect(stepFactor(Infinity, 1 / 5)).toBe(MIN_FACTOR);
    expect(stepFactor(NaN, 1 / 5)).toBe(MIN_FACTOR);
  });
});
