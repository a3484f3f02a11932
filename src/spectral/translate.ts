/**
 * Translation of a real periodic signal on its half spectrum (Fourier shift theorem): u(x) → u(x − a) is
 * û_m → e^{−ik_m a} û_m, k_m = 2πm/L. Used to carry a field computed in a moving frame back to the lab.
 */

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
