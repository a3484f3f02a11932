/**
 * ETDRK4 exponential time differencing for y' = L y + N(t, y) with a diagonal linear part L (Cox & Matthews,
 * J. Comput. Phys. 176, 430, 2002, eq. (26)–(29)):
 *
 *     a = e^{hL/2} y + Q N(t, y),                 Q = (e^{hL/2} − 1)/L
 *     b = e^{hL/2} y + Q N(t + h/2, a)
 *     c = e^{hL/2} a + Q (2N(t + h/2, b) − N(t, y))
 *     y(t + h) = e^{hL} y + f₁ N(t, y) + 2f₂ (N(t + h/2, a) + N(t + h/2, b)) + f₃ N(t + h, c)
 *
 * with f₁,₂,₃ = h × the φ-combinations of phi.ts. Two coefficient builders: the contour mean for a general L
 * (`etdrk4Coefficients`, Kassam & Trefethen 2005) and the series/closed form for a purely imaginary L
 * (`etdrk4ImaginaryCoefficients`, Hochbruck & Ostermann 2010). One step function for both; the right-hand side
 * receives the stage index (times t + ETDRK4_STAGE_NODES[i]·h) so non-autonomous N work as well.
 *
 * All arrays are interleaved complex (re, im).
 */
import { etdContourMeans, phiImaginary } from './phi.ts';

/** stage times of the four right-hand-side evaluations, as fractions of the step */
export const ETDRK4_STAGE_NODES: readonly number[] = Object.freeze([0, 0.5, 0.5, 1]);

export interface Etdrk4Coefficients {
  h: number;
  readonly e: Float64Array; // e^{hL}
  readonly e2: Float64Array; // e^{hL/2}
  readonly q: Float64Array; // h φ-type coefficient for the half stages
  readonly f1: Float64Array;
  readonly f2: Float64Array;
  readonly f3: Float64Array;
}

/** an empty coefficient table for m modes (filled by `etdrk4ImaginaryCoefficients`) */
export function etdrk4Table(m: number): Etdrk4Coefficients {
  const z = () => new Float64Array(2 * m);
  return { h: 0, e: z(), e2: z(), q: z(), f1: z(), f2: z(), f3: z() };
}

/**
 * Coefficients for step h and L_m = lre[m] + i lim[m] (lre omitted: purely imaginary L) by contour means.
 */
export function etdrk4Coefficients(h: number, lim: Float64Array, lre: Float64Array | null = null): Etdrk4Coefficients {
  const m = lim.length;
  const co = etdrk4Table(m);
  co.h = h;
  const { e, e2, q, f1, f2, f3 } = co;
  const mean = new Float64Array(8);
  for (let j = 0; j < m; j++) {
    const zr0 = lre ? h * lre[j] : 0;
    const zi0 = h * lim[j];
    let ex = Math.exp(zr0);
    e[2 * j] = ex * Math.cos(zi0);
    e[2 * j + 1] = ex * Math.sin(zi0);
    ex = Math.exp(zr0 / 2);
    e2[2 * j] = ex * Math.cos(zi0 / 2);
    e2[2 * j + 1] = ex * Math.sin(zi0 / 2);
    etdContourMeans(zr0, zi0, h, mean);
    q[2 * j] = mean[0];
    q[2 * j + 1] = mean[1];
    f1[2 * j] = mean[2];
    f1[2 * j + 1] = mean[3];
    f2[2 * j] = mean[4];
    f2[2 * j + 1] = mean[5];
    f3[2 * j] = mean[6];
    f3[2 * j + 1] = mean[7];
  }
  return co;
}

/**
 * Fill `co` for step h and the purely imaginary L_j = i lim[j] (θ = h·lim[j]) from φ₁,₂,₃(iθ) and φ₁(iθ/2);
 * `phi` is scratch of length 6. Allocates nothing.
 */
export function etdrk4ImaginaryCoefficients(h: number, lim: Float64Array, co: Etdrk4Coefficients, phi: Float64Array): void {
  co.h = h;
  const { e: E, e2: E2, q: Q, f1: F1, f2: F2, f3: F3 } = co;
  for (let j = 0; j < lim.length; j++) {
    const th = h * lim[j];
    phiImaginary(th, phi);
    E[2 * j] = Math.cos(th); E[2 * j + 1] = Math.sin(th);
    E2[2 * j] = Math.cos(th / 2); E2[2 * j + 1] = Math.sin(th / 2);
    F1[2 * j] = h * (phi[0] - 3 * phi[2] + 4 * phi[4]); F1[2 * j + 1] = h * (phi[1] - 3 * phi[3] + 4 * phi[5]);
    F2[2 * j] = h * (phi[2] - 2 * phi[4]); F2[2 * j + 1] = h * (phi[3] - 2 * phi[5]);
    F3[2 * j] = h * (4 * phi[4] - phi[2]); F3[2 * j + 1] = h * (4 * phi[5] - phi[3]);
    phiImaginary(th / 2, phi);
    Q[2 * j] = (h / 2) * phi[0]; Q[2 * j + 1] = (h / 2) * phi[1];
  }
}

/** The right-hand side N at stage `stage` (time t + ETDRK4_STAGE_NODES[stage]·h): out = N(y); y ≠ out. */
export type StageRhs = (y: Float64Array, out: Float64Array, stage: number) => void;

export interface Etdrk4Workspace {
  ev: Float64Array; a: Float64Array; b: Float64Array; c: Float64Array;
  na: Float64Array; nb: Float64Array; nc: Float64Array;
}

export function etdrk4Workspace(m: number): Etdrk4Workspace {
  const z = () => new Float64Array(2 * m);
  return { ev: z(), a: z(), b: z(), c: z(), na: z(), nb: z(), nc: z() };
}

/**
 * One ETDRK4 step: out = y(t + h) given v = y(t) and nv = N(t, v) (passed in so that step doubling can share it).
 * Only the first `active` modes are stepped (the caller keeps the rest at zero, e.g. beyond a dealiasing cut).
 * State in, state out: v and nv are read only; ws is scratch; out must differ from v.
 */
export function etdrk4Step(co: Etdrk4Coefficients, rhs: StageRhs, v: Float64Array, nv: Float64Array, out: Float64Array, ws: Etdrk4Workspace, active = v.length / 2): void {
  const e = co.e, e2 = co.e2, q = co.q, f1 = co.f1, f2 = co.f2, f3 = co.f3;
  const ev = ws.ev, a = ws.a, b = ws.b, c = ws.c, na = ws.na, nb = ws.nb, nc = ws.nc;
  const n2 = 2 * active;
  // ev = e2 v ; a = ev + q Nv
  for (let i = 0; i < n2; i += 2) {
    const vr = v[i], vi = v[i + 1], gr = nv[i], gi = nv[i + 1], er = e2[i], ei = e2[i + 1], qr = q[i], qi = q[i + 1];
    const xr = er * vr - ei * vi;
    const xi = er * vi + ei * vr;
    ev[i] = xr;
    ev[i + 1] = xi;
    a[i] = xr + qr * gr - qi * gi;
    a[i + 1] = xi + qr * gi + qi * gr;
  }
  rhs(a, na, 1);
  // b = ev + q Na
  for (let i = 0; i < n2; i += 2) {
    const gr = na[i], gi = na[i + 1], qr = q[i], qi = q[i + 1];
    b[i] = ev[i] + qr * gr - qi * gi;
    b[i + 1] = ev[i + 1] + qr * gi + qi * gr;
  }
  rhs(b, nb, 2);
  // c = e2 a + q (2 Nb − Nv)
  for (let i = 0; i < n2; i += 2) {
    const ar = a[i], ai = a[i + 1], er = e2[i], ei = e2[i + 1], qr = q[i], qi = q[i + 1];
    const gr = 2 * nb[i] - nv[i], gi = 2 * nb[i + 1] - nv[i + 1];
    c[i] = er * ar - ei * ai + qr * gr - qi * gi;
    c[i + 1] = er * ai + ei * ar + qr * gi + qi * gr;
  }
  rhs(c, nc, 3);
  // out = e v + f1 Nv + 2 f2 (Na + Nb) + f3 Nc
  for (let i = 0; i < n2; i += 2) {
    const vr = v[i], vi = v[i + 1];
    const sr = 2 * (na[i] + nb[i]), si = 2 * (na[i + 1] + nb[i + 1]);
    const er = e[i], ei = e[i + 1], p1r = f1[i], p1i = f1[i + 1], p2r = f2[i], p2i = f2[i + 1], p3r = f3[i], p3i = f3[i + 1];
    const g0r = nv[i], g0i = nv[i + 1], g3r = nc[i], g3i = nc[i + 1];
    out[i] = er * vr - ei * vi + p1r * g0r - p1i * g0i + p2r * sr - p2i * si + p3r * g3r - p3i * g3i;
    out[i + 1] = er * vi + ei * vr + p1r * g0i + p1i * g0r + p2r * si + p2i * sr + p3r * g3i + p3i * g3r;
  }
}
