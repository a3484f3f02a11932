import { describe, expect, it } from 'vitest';
import { ComplexFFT, RealFFT } from '../src/spectral/fft.ts';
import { makeGrid } from '../src/spectral/grid.ts';
import { derivative, resample } from '../src/spectral/ops.ts';
import { GaussianBlur } from '../src/spectral/blur.ts';

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

/** direct O(N²) inverse DFT of a Hermitian half spectrum: x_j = (1/N) Σ_k X_k e^{2πijk/N} over all k, X_{N−k} = X̄_k,
 *  the imaginary parts of X_0 and X_{N/2} taken as zero (the definition, as naiveDft) */
function naiveInverse(spec: Float64Array, n: number): Float64Array {
  const x = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    let s = spec[0] + (j % 2 === 0 ? 1 : -1) * spec[n];
    for (let k = 1; k < n / 2; k++) {
      const th = (2 * Math.PI * j * k) / n;
      s += 2 * (spec[2 * k] * Math.cos(th) - spec[2 * k + 1] * Math.sin(th));
    }
    x[j] = s / n;
  }
  return x;
}

/** a spectrum with every mode populated: real and imaginary parts of order one (common practice) */
function testSpectrum(n: number): Float64Array {
  const spec = Float64Array.from({ length: n + 2 }, (_, i) => Math.cos(1.7 * i + 0.3) + 0.5 * Math.sin(0.37 * i * i));
  spec[1] = 0;
  spec[n + 1] = 0;
  return spec;
}

describe('RealFFT', () => {
  // sizes reach every shape of the transform: last stages of length 2, 4 and 8 after up to four stages of radix 4 and 8
  for (const n of [4, 8, 16, 32, 64, 128, 256, 512, 1024, 2048]) {
    it(`matches the direct DFT and inverts itself, N = ${n}`, () => {
      const x = Float64Array.from({ length: n }, (_, j) => Math.sin(0.3 * j * j) + 0.1 * j);
      const f = new RealFFT(n);
      const s = new Float64Array(n + 2);
      f.forward(x, s);
      const ref = naiveDft(x);
      // the direct sums carry round-off of about ε·N·max|x| (common practice)
      const scale = n * Math.max(...x.map(Math.abs));
      for (let i = 0; i < n + 2; i++) expect(Math.abs(s[i] - ref[i])).toBeLessThan(1e-12 * scale);
      const back = new Float64Array(n);
      f.inverse(s, back);
      for (let j = 0; j < n; j++) expect(back[j]).toBeCloseTo(x[j], 12);
    });
    it(`inverse and spectrum of the square match the direct sums, N = ${n}`, () => {
      const f = new RealFFT(n);
      const spec = testSpectrum(n);
      const x = new Float64Array(n);
      f.inverse(spec, x);
      const ref = naiveInverse(spec, n);
      for (let j = 0; j < n; j++) expect(Math.abs(x[j] - ref[j])).toBeLessThan(1e-13);
      // DFT of u², u the direct inverse of spec
      const sq = naiveDft(ref.map((u) => u * u));
      const out = new Float64Array(n + 2);
      f.squareOf(spec, out);
      const scale = n * Math.max(...ref.map((u) => u * u));
      for (let i = 0; i < n + 2; i++) expect(Math.abs(out[i] - sq[i])).toBeLessThan(1e-12 * scale);
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

describe('Gaussian point-spread blur (spectral/blur.ts)', () => {
  it('a Gaussian of 1/e² radius a blurred by a PSF of radius w is the Gaussian of radius √(a² + w²) with peak a/√(a² + w²), to 1e-12 (closed form: convolution of Gaussians)', () => {
    const grid = makeGrid(40, 512);
    const a = 1.5, w = 0.8;
    const f = grid.x.map((x) => Math.exp((-2 * x * x) / (a * a)));
    const out = new GaussianBlur(grid, w).apply(f, new Float64Array(grid.n));
    const s2 = a * a + w * w;
    let err = 0;
    grid.x.forEach((x, j) => { err = Math.max(err, Math.abs(out[j] - (a / Math.sqrt(s2)) * Math.exp((-2 * x * x) / s2))); });
    expect(err).toBeLessThan(1e-12);
    expect(() => new GaussianBlur(grid, 0)).toThrow(/radius = 0 must be a finite number > 0/);
  });
});
