/**
 * Periodic Fourier grid: x_j = -L/2 + jL/N, j = 0 … N-1, wavenumbers k = 2πm/L in FFT order.
 * Fourier pseudo-spectral conventions follow Trefethen, Spectral Methods in MATLAB (SIAM 2000), ch. 3:
 * odd derivatives use a zero Nyquist mode so that the discrete operators stay Hermitian/real.
 */

export interface Grid {
  /** number of points N (a power of two) */
  readonly n: number;
  /** box length L, in the length unit of the caller */
  readonly length: number;
  /** spacing L/N */
  readonly dx: number;
  /** positions x_j = -L/2 + jL/N */
  readonly x: Float64Array;
  /** wavenumbers of the half spectrum m = 0 … N/2 (Nyquist included, positive) */
  readonly kHalf: Float64Array;
  /** wavenumbers in full FFT order (m ≥ N/2 wrap to negative; Nyquist kept at -πN/L) */
  readonly k: Float64Array;
  /** as `k` but with the Nyquist mode set to zero: use for odd powers (k, k³) */
  readonly kOdd: Float64Array;
  /** largest resolved wavenumber πN/L */
  readonly kMax: number;
}

export function isPowerOfTwo(n: number): boolean {
  return Number.isInteger(n) && n >= 2 && (n & (n - 1)) === 0;
}

export function makeGrid(length: number, n: number): Grid {
  if (!(length > 0) || !Number.isFinite(length)) throw new RangeError(`grid length must be a positive finite number, got ${length}`);
  if (!isPowerOfTwo(n)) throw new RangeError(`grid points must be a power of two, got ${n}`);
  const dx = length / n;
  const dk = (2 * Math.PI) / length;
  const x = new Float64Array(n);
  const k = new Float64Array(n);
  const kOdd = new Float64Array(n);
  const kHalf = new Float64Array(n / 2 + 1);
  for (let j = 0; j < n; j++) {
    x[j] = -length / 2 + j * dx;
    const m = j < n / 2 ? j : j - n;
    k[j] = m * dk;
    kOdd[j] = j === n / 2 ? 0 : m * dk;
  }
  for (let m = 0; m <= n / 2; m++) kHalf[m] = m * dk;
  return { n, length, dx, x, k, kOdd, kHalf, kMax: (Math.PI * n) / length };
}
