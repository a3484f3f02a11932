/**
 * The φ-functions of exponential integrators, φ_j(z) = Σ_{n≥0} zⁿ/(n + j)!  (Hochbruck & Ostermann, Acta
 * Numerica 19, 209, 2010, eq. (2.10)), in the two forms the ETDRK4 coefficient tables need:
 *
 *  - `etdContourMeans`: for a general complex z = hL (diagonal linear part), the ETDRK4 combinations of φ₁, φ₂, φ₃
 *    as the mean over a circle of radius CONTOUR_RADIUS around z (Kassam & Trefethen, SIAM J. Sci. Comput. 26,
 *    1214, 2005, eq. (2.5)–(2.6)): Cauchy's formula with the trapezoidal rule, which avoids the cancellation of the
 *    closed forms near z = 0. The circle is the FULL one, so complex z stay complex (physics.md §5: taking real
 *    parts of a half-circle mean gives O(1) errors for imaginary L).
 *  - `phiImaginary`: φ₁, φ₂, φ₃ at a purely imaginary z = iθ, by the Taylor series for |θ| < PHI_SERIES_BELOW and the
 *    closed forms φ₁ = (e^z − 1)/z, φ₂ = (e^z − 1 − z)/z², φ₃ = (e^z − 1 − z − z²/2)/z³ otherwise.
 *
 * The ETDRK4 combinations (Cox & Matthews, J. Comput. Phys. 176, 430, 2002, eq. (26)–(29)) in φ form are
 *     Q = (e^{z/2} − 1)/z = ½φ₁(z/2),  f₁ = φ₁ − 3φ₂ + 4φ₃,  f₂ = φ₂ − 2φ₃,  f₃ = 4φ₃ − φ₂.
 * Complex numbers are interleaved (re, im).
 */

/** contour points on the full circle: the trapezoidal mean converges faster than geometrically for these entire
 * functions; 16 give the same two-soliton benchmark error as 32 to four digits (measured) at half the set-up cost */
export const CONTOUR_POINTS = 16;
/** contour radius: Kassam & Trefethen use 1; large enough to avoid cancellation near z = 0 */
export const CONTOUR_RADIUS = 1;
/** below this |θ| the φ-functions use their Taylor series (closed forms lose digits as |θ| → 0) */
export const PHI_SERIES_BELOW = 1;
/** Taylor terms: |θ|ⁿ/n! < 1e-24 at n = 24 for |θ| < 1 */
const PHI_SERIES_TERMS = 24;

/**
 * out[0..7] = scale × contour means of (Q, f₁, f₂, f₃) at z = zr + i zi (module comment), each (re, im);
 * computed as scale·Σ/M so that the caller's h enters before the division.
 */
export function etdContourMeans(zr0: number, zi0: number, scale: number, out: Float64Array): void {
  const M = CONTOUR_POINTS;
  let qr = 0, qi = 0, a1r = 0, a1i = 0, a2r = 0, a2i = 0, a3r = 0, a3i = 0;
  for (let p = 1; p <= M; p++) {
    const th = (Math.PI * (p - 0.5)) / (M / 2); // full circle: angles π(p-½)/(M/2), p = 1 … M
    const zr = zr0 + CONTOUR_RADIUS * Math.cos(th);
    const zi = zi0 + CONTOUR_RADIUS * Math.sin(th);
    // e^z and e^{z/2}
    const ez = Math.exp(zr);
    const ezr = ez * Math.cos(zi);
    const ezi = ez * Math.sin(zi);
    const eh = Math.exp(zr / 2);
    const ehr = eh * Math.cos(zi / 2);
    const ehi = eh * Math.sin(zi / 2);
    // 1/z, 1/z³
    const d = zr * zr + zi * zi;
    const izr = zr / d;
    const izi = -zi / d;
    const iz2r = izr * izr - izi * izi;
    const iz2i = 2 * izr * izi;
    const iz3r = iz2r * izr - iz2i * izi;
    const iz3i = iz2r * izi + iz2i * izr;
    // z²
    const z2r = zr * zr - zi * zi;
    const z2i = 2 * zr * zi;
    // Q: (e^{z/2} - 1)/z
    qr += (ehr - 1) * izr - ehi * izi;
    qi += (ehr - 1) * izi + ehi * izr;
    // f1: (-4 - z + e^z (4 - 3z + z²)) / z³
    let wr = 4 - 3 * zr + z2r;
    let wi = -3 * zi + z2i;
    let nr = -4 - zr + (ezr * wr - ezi * wi);
    let ni = -zi + (ezr * wi + ezi * wr);
    a1r += nr * iz3r - ni * iz3i;
    a1i += nr * iz3i + ni * iz3r;
    // f2: (2 + z + e^z (z - 2)) / z³
    wr = zr - 2;
    wi = zi;
    nr = 2 + zr + (ezr * wr - ezi * wi);
    ni = zi + (ezr * wi + ezi * wr);
    a2r += nr * iz3r - ni * iz3i;
    a2i += nr * iz3i + ni * iz3r;
    // f3: (-4 - 3z - z² + e^z (4 - z)) / z³
    wr = 4 - zr;
    wi = -zi;
    nr = -4 - 3 * zr - z2r + (ezr * wr - ezi * wi);
    ni = -3 * zi - z2i + (ezr * wi + ezi * wr);
    a3r += nr * iz3r - ni * iz3i;
    a3i += nr * iz3i + ni * iz3r;
  }
  out[0] = (scale * qr) / M;
  out[1] = (scale * qi) / M;
  out[2] = (scale * a1r) / M;
  out[3] = (scale * a1i) / M;
  out[4] = (scale * a2r) / M;
  out[5] = (scale * a2i) / M;
  out[6] = (scale * a3r) / M;
  out[7] = (scale * a3i) / M;
}

/** out[o … o+5] = [Re φ₁, Im φ₁, Re φ₂, Im φ₂, Re φ₃, Im φ₃] at z = iθ (module comment); below PHI_SERIES_BELOW φ₃ from
 *  its series and φ₂ = zφ₃ + 1/2, φ₁ = zφ₂ + 1 (the recurrence φ_k = zφ_{k+1} + 1/k!, Hochbruck & Ostermann 2010,
 *  eq. (2.11); stable upwards for |z| < 1) */
export function phiImaginary(theta: number, out: Float64Array, o = 0): void {
  if (Math.abs(theta) < PHI_SERIES_BELOW) {
    // φ₃ = (1/3!)(1 + iθ/4 (1 + iθ/5 (1 + …))), evaluated from the innermost factor outwards
    let re = 0;
    let im = 0;
    for (let nn = PHI_SERIES_TERMS; nn >= 0; nn--) {
      const f = 1 / (nn + 4);
      const nr = 1 - theta * im * f;
      const ni = theta * re * f;
      re = nr;
      im = ni;
    }
    const p3r = re / 6, p3i = im / 6;
    const p2r = 0.5 - theta * p3i, p2i = theta * p3r;
    out[o] = 1 - theta * p2i;
    out[o + 1] = theta * p2r;
    out[o + 2] = p2r;
    out[o + 3] = p2i;
    out[o + 4] = p3r;
    out[o + 5] = p3i;
    return;
  }
  phiImaginaryFromExp(theta, Math.cos(theta), Math.sin(theta), out, o);
}

/** phiImaginary for |θ| ≥ PHI_SERIES_BELOW from the closed forms, with cos θ and sin θ given (a caller that has
 *  e^{iθ} already saves the transcendental calls) */
export function phiImaginaryFromExp(theta: number, c: number, sn: number, out: Float64Array, o = 0): void {
  // z = iθ: 1/z = −i/θ, 1/z² = −1/θ², 1/z³ = i/θ³
  const e1r = c - 1;
  const e1i = sn;
  out[o] = e1i / theta;
  out[o + 1] = -e1r / theta;
  const e2r = e1r;
  const e2i = e1i - theta;
  out[o + 2] = -e2r / (theta * theta);
  out[o + 3] = -e2i / (theta * theta);
  const e3r = e2r + (theta * theta) / 2;
  const e3i = e2i;
  const t3 = theta * theta * theta;
  out[o + 4] = -e3i / t3;
  out[o + 5] = e3r / t3;
}
