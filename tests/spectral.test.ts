import { describe, expect, it } from 'vitest';
import { ComplexFFT, RealFFT } from '../src/spectral/fft.ts';
import { makeGrid } from '../src/spectral/grid.ts';
import { derivative, resample } from '../src/spectral/ops.ts';

/** direct O(N²) DFT: the definition X_k = Σ x_j e^{-2πijk/N} (any DSP text, e.g. Oppenheim & Schafer 2010, eq. 8.67) */
function naiveDft(x: Float64Array): Float64Array {
  const n = x.length;
  const out = new Float64Array(n + 2);
  for (let k = 0; k <= n / 2; k++) {
    let re = 0;
    let im = 0;
    for (let j = 0; j < n; j++) {
      re += x[j] * Math.cos((2 * Math.PI * j * k) / n);
      im -= x[j] * Math.sin((2 * Math.PI * j * k) / n);
    }
    out[2 * k] = re;
    out[2 * k + 1] = im;
  }
  return out;
}

describe('RealFFT', () => {
  for (const n of [4, 8, 64, 256]) {
    it(`matches the direct DFT and inverts itself, N = ${n}`, () => {
      const x = Float64Array.from({ length: n }, (_, j) => Math.sin(0.3 * j * j) + 0.1 * j);
      const f = new RealFFT(n);
      const s = new Float64Array(n + 2);
      f.forward(x, s);
      const ref = naiveDft(x);
      for (let i = 0; i < n + 2; i++) expect(s[i]).toBeCloseTo(ref[i], 9);
      const back = new Float64Array(n);
      f.inverse(s, back);
      for (let j = 0; j < n; j++) expect(back[j]).toBeCloseTo(x[j], 12);
    });
  }
  it('complex transform round trip', () => {
    const n = 32;
    const f = new ComplexFFT(n);
    const a = Float64Array.from({ length: 2 * n }, (_, j) => Math.cos(j));
    const b = new Float64Array(2 * n);
    const c = new Float64Array(2 * n);
    f.forward(a, b);
    f.inverse(b, c);
    for (let j = 0; j < 2 * n; j++) expect(c[j]).toBeCloseTo(a[j], 12);
  });
});

describe('spectral derivatives', () => {
  it('differentiate sech² exactly to spectral accuracy (closed-form derivatives)', () => {
    const g = makeGrid(40, 256);
    const u = g.x.map((x) => 1 / Math.cosh(x) ** 2);
    const d1 = derivative(g, u, 1);
    const d3 = derivative(g, u, 3);
    for (let j = 0; j < g.n; j += 7) {
      const x = g.x[j];
      const s = 1 / Math.cosh(x);
      const t = Math.tanh(x);
      // with s = sech x, t = tanh x, s' = -st, t' = s²: (s²)' = -2s²t and (s²)''' = -8s²t³ + 16s⁴t
      expect(d1[j]).toBeCloseTo(-2 * s * s * t, 10);
      const third = -8 * s * s * t ** 3 + 16 * s ** 4 * t;
      expect(d3[j]).toBeCloseTo(third, 8);
    }
  });
  it('resampling a band-limited signal is exact', () => {
    const n = 64;
    const u = Float64Array.from({ length: n }, (_, j) => Math.cos((2 * Math.PI * 3 * j) / n) + 0.5 * Math.sin((2 * Math.PI * 5 * j) / n));
    const v = resample(u, 128);
    for (let j = 0; j < 128; j++) expect(v[j]).toBeCloseTo(Math.cos((2 * Math.PI * 3 * j) / 128) + 0.5 * Math.sin((2 * Math.PI * 5 * j) / 128), 12);
    const w = resample(v, 64);
    for (let j = 0; j < 64; j++) expect(w[j]).toBeCloseTo(u[j], 12);
  });
});
