/**
 * Translation of a periodic signal through its spectrum (Fourier shift theorem): u(x) → u(x − a) is
 * û_k → e^{−ika} û_k. Used to carry a field or a state computed in a moving frame back to the lab.
 */
import { ComplexFFT } from './fft.ts';

/** the phases are recomputed from cos/sin every this many modes and continued by complex multiplication between (a
 *  few ulp of drift per mode; common practice) */
const ANCHOR_EVERY = 64;

/** û_m ← e^{−i(2πm/L)a} û_m for the first `modes` modes of an interleaved half spectrum, in place (allocates nothing) */
export function translateHalfSpectrum(v: Float64Array, modes: number, a: number, length: number): void {
  const shift = a - length * Math.round(a / length);
  if (shift === 0) return;
  const theta = (-2 * Math.PI * shift) / length;
  const stepR = Math.cos(theta), stepI = Math.sin(theta);
  let pr = 1, pi = 0;
  for (let m = 0; m < modes; m++) {
    if (m % ANCHOR_EVERY === 0) {
      pr = Math.cos(m * theta);
      pi = Math.sin(m * theta);
    }
    const re = v[2 * m], im = v[2 * m + 1];
    v[2 * m] = pr * re - pi * im;
    v[2 * m + 1] = pr * im + pi * re;
    const nr = pr * stepR - pi * stepI;
    pi = pr * stepI + pi * stepR;
    pr = nr;
  }
}

/**
 * Translation of a complex periodic state ψ(x) → ψ(x − a) (interleaved re/im, length 2N) through its spectrum,
 * e^{−ika} per mode in FFT order (grid.k); one instance owns its transform and buffer.
 */
export class ComplexTranslation {
  private readonly fft: ComplexFFT;
  private readonly spec: Float64Array;
  constructor(private readonly k: Float64Array) {
    this.fft = new ComplexFFT(k.length);
    this.spec = new Float64Array(2 * k.length);
  }
  /** ψ ← ψ(· − a), in place */
  apply(psi: Float64Array, a: number): void {
    if (a === 0) return;
    const s = this.spec;
    this.fft.forward(psi, s);
    const k = this.k;
    for (let j = 0; j < k.length; j++) {
      const ph = -k[j] * a;
      const c = Math.cos(ph), sn = Math.sin(ph);
      const re = s[2 * j], im = s[2 * j + 1];
      s[2 * j] = c * re - sn * im;
      s[2 * j + 1] = c * im + sn * re;
    }
    this.fft.inverse(s, psi);
  }
}
