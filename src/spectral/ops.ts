/**
 * Allocating convenience operators on a periodic grid (diagnostics, set-up, tests). Hot loops use the
 * buffer-reusing transforms in fft.ts directly.
 */
import { RealFFT } from './fft.ts';
import type { Grid } from './grid.ts';

const cache = new Map<number, RealFFT>();
export function realFFT(n: number): RealFFT {
  let f = cache.get(n);
  if (!f) {
    f = new RealFFT(n);
    cache.set(n, f);
  }
  return f;
}

/** half spectrum (interleaved, N+2) of a real signal */
export function spectrum(u: Float64Array): Float64Array {
  const s = new Float64Array(u.length + 2);
  realFFT(u.length).forward(u, s);
  return s;
}

/** d^order u / dx^order by Fourier differentiation (Nyquist dropped for odd orders) */
/** the band beyond which bandTail looks: the top third of the grid's wavenumbers (the 2/3 rule's discarded band) */
export const TAIL_BAND = 2 / 3;

/** max |f̂_k| over |k| > TAIL_BAND·k_max relative to max |f̂_k|: how much of a real f the grid's top band carries (a
 *  resolved f has a tail at round-off; common practice) */
export function bandTail(grid: Grid, f: Float64Array): number {
  const s = spectrum(f);
  let top = 0, tail = 0;
  for (let m = 0; m <= grid.n / 2; m++) {
    const a = Math.hypot(s[2 * m], s[2 * m + 1]);
    top = Math.max(top, a);
    if (Math.abs(grid.kHalf[m]) > TAIL_BAND * grid.kMax) tail = Math.max(tail, a);
  }
  return top > 0 ? tail / top : 0;
}

export function derivative(grid: Grid, u: Float64Array, order: number): Float64Array {
  const n = grid.n;
  const s = spectrum(u);
  for (let m = 0; m <= n / 2; m++) {
    const k = grid.kHalf[m];
    if (order % 2 === 1 && m === n / 2) {
      s[2 * m] = 0;
      s[2 * m + 1] = 0;
      continue;
    }
    // (ik)^order
    const mag = Math.pow(k, order);
    const re = s[2 * m];
    const im = s[2 * m + 1];
    switch (order % 4) {
      case 0: s[2 * m] = mag * re; s[2 * m + 1] = mag * im; break;
      case 1: s[2 * m] = -mag * im; s[2 * m + 1] = mag * re; break;
      case 2: s[2 * m] = -mag * re; s[2 * m + 1] = -mag * im; break;
      default: s[2 * m] = mag * im; s[2 * m + 1] = -mag * re; break;
    }
  }
  const out = new Float64Array(n);
  realFFT(n).inverse(s, out);
  return out;
}

/** trapezoidal (spectrally exact for periodic functions) integral Σ f_j dx */
export function integrate(grid: Grid, f: Float64Array): number {
  let s = 0;
  for (let j = 0; j < f.length; j++) s += f[j];
  return s * grid.dx;
}

/**
 * Band-limited resampling of a periodic signal to a new number of points (zero-padding or truncating the
 * spectrum; the Nyquist mode of the shorter length is split/halved so that the result stays real).
 */
export function resample(u: Float64Array, nOut: number): Float64Array {
  const nIn = u.length;
  const s = spectrum(u);
  const t = new Float64Array(nOut + 2);
  const mMax = Math.min(nIn, nOut) / 2;
  const scale = nOut / nIn;
  for (let m = 0; m <= mMax; m++) {
    let f = scale;
    if (m === mMax && nIn !== nOut) f *= nOut > nIn ? 0.5 : 1;
    t[2 * m] = s[2 * m] * f;
    t[2 * m + 1] = m === mMax ? 0 : s[2 * m + 1] * f;
  }
  const out = new Float64Array(nOut);
  realFFT(nOut).inverse(t, out);
  return out;
}

/**
 * Index i of the interval [knots[i], knots[i+1]] holding x, for ascending knots (binary search; values outside
 * the range give the first or last interval). Shared by the dense outputs and sequence interpolants.
 */
export function intervalIndex(knots: ArrayLike<number>, x: number): number {
  let lo = 0;
  let hi = knots.length - 1;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (knots[mid] <= x) lo = mid;
    else hi = mid;
  }
  return Math.min(lo, Math.max(0, knots.length - 2));
}
