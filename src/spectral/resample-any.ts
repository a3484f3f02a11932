/**
 * Band-limited (trigonometric) interpolation of a periodic sample of ANY length n onto a power-of-two grid of the
 * same period: the direct DFT of the n samples (no power-of-two FFT applies), the spectrum carried over mode by
 * mode and the N-point inverse by the FFT of fft.ts. For even n the Nyquist mode is split evenly between ±n/2,
 * so the interpolant is real and symmetric (Trefethen, Spectral Methods in MATLAB, SIAM 2000, ch. 3; the same
 * convention as `resample` in ops.ts). O(n²) per sample: ~1e6 operations for n ≈ 1000.
 */
import { realFFT } from './ops.ts';
import { isPowerOfTwo } from './grid.ts';

/** the smallest power of two ≥ n */
export function nextPowerOfTwo(n: number): number {
  let p = 2;
  while (p < n) p *= 2;
  return p;
}

/** u (n samples of one period, any n ≥ 2) interpolated onto N ≥ n points of the same period (N a power of two) */
export function resampleToPowerOfTwo(u: ArrayLike<number>, nOut: number): Float64Array {
  const n = u.length;
  if (!isPowerOfTwo(nOut) || nOut < n) throw new RangeError(`resampleToPowerOfTwo: target ${nOut} must be a power of two ≥ ${n}`);
  const cos = new Float64Array(n);
  const sin = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    cos[j] = Math.cos((2 * Math.PI * j) / n);
    sin[j] = Math.sin((2 * Math.PI * j) / n);
  }
  const half = new Float64Array(nOut + 2);
  const scale = nOut / n;
  const top = Math.floor(n / 2);
  for (let m = 0; m <= top; m++) {
    let re = 0, im = 0;
    for (let j = 0, p = 0; j < n; j++, p = (p + m) % n) {
      // X_m = Σ_j u_j e^{−2πijm/n}
      re += u[j] * cos[p];
      im -= u[j] * sin[p];
    }
    const nyquist = n % 2 === 0 && m === n / 2;
    const f = nyquist && nOut > n ? 0.5 * scale : scale;
    half[2 * m] = re * f;
    half[2 * m + 1] = nyquist ? 0 : im * f;
  }
  const out = new Float64Array(nOut);
  realFFT(nOut).inverse(half, out);
  return out;
}
