/**
 * Admissibility of a sampled potential sequence by fitting the KdV flow between consecutive frames
 * (physics.md §9). In natural units (physics.md §3) the flow with a co-moving drift c is
 *
 *     u_τ = 6uu_ξ − u_ξξξ − c u_ξ,        u(ξ, τ) = w(ξ − cτ, τ),  w the driftless solution,
 *
 * the convention of `FlowEquation.drift` in flow/kdv.ts (u_t + αuu_x + βu_xxx + cu_x = 0, α = −6, β = 1).
 * A pair of frames (u_k, u_{k+1}) is admissible when some Δτ ≥ 0 and drift c make
 * u_{k+1} = S_{cΔτ} Φ_Δτ(u_k), with Φ_τ the driftless flow and S_s v(ξ) = v(ξ − s) the translation (which
 * commutes with Φ because KdV is translation invariant). Per interval:
 *
 *  1. When the frames hold amplitude beyond the flow's 2/3-rule band (modes m > N/3, flow/kdv.ts), u_k is
 *     band-limited-interpolated onto PAD_FACTOR·N points of the same box, whose band keeps every mode of the
 *     N-point frames (the flow would otherwise drop them); the driftless flow is integrated
 *     ONCE with dense output (ETDRK4, flow/kdv.ts) over a bracket [0, τ_hi] that is extended, continuing the
 *     same trajectory, while the best τ sits at its upper edge.
 *  2. For each τ the misfit F(τ) = min_s ‖S_s Φ_τ(u_k) − u_{k+1}‖² (Parseval on the half spectrum, Nyquist
 *     left out because a real band-limited signal has no defined sub-grid shift there): the maximiser of the
 *     spectral cross-correlation C(s) = Σ_m w_m Re(v̂_m ŵ_m* e^{−ik_m s}) is located on the grid by one inverse
 *     FFT, refined by a parabola through the three largest samples and then by Newton's method on C′(s) = 0
 *     with the analytic derivatives of the trigonometric sum. With a given drift, s = cτ and no search.
 *  3. The outer minimisation over τ: a coarse scan of F on SCAN_POINTS points, then Brent's method (golden
 *     section with parabolic interpolation; R. P. Brent, Algorithms for Minimization without Derivatives,
 *     Prentice-Hall 1973, ch. 5) on the two scan intervals around the smallest sample.
 *
 * The residual is ‖S_s Φ_Δτ(u_k) − u_{k+1}‖ / ‖u_{k+1} − u_k‖: the part of the change between the frames that
 * the flow does not explain. Static frames (‖u_{k+1} − u_k‖ at round-off of ‖u_k‖) are exactly admissible
 * with Δτ = 0: residual 0 and `static: true`.
 *
 * One soliton is degenerate: its KdV motion is a translation at speed v = 4κ² (physics.md §4), so Δτ and c are
 * not separately determined, only the displacement (v + c)Δτ. It is recognised from the sine of the angle between
 * the KdV rate 6uu_ξ − u_ξξξ and u_ξ; without a given drift such an interval is fitted with c = 0 and reported
 * with `degenerate = { speed: v, displacement }`.
 *
 * `fitInterval` is a pure function of its arguments (no module-level mutable state), so intervals can be fitted
 * independently, in any order or in worker threads.
 */
import { NumericalError } from '../core/errors.ts';
import type { DenseFlow } from '../flow/dense.ts';
import { integrateFlow, naturalFlowEquation } from '../flow/kdv.ts';
import { RealFFT } from '../spectral/fft.ts';
import { makeGrid, type Grid } from '../spectral/grid.ts';
import { resample } from '../spectral/ops.ts';

/** local flow error per step relative to max|u_k|, as the flow's ETD5(3) pair estimates it (the error of its
 *  third-order embedding, far above that of the fifth-order solution it keeps): exact frames of the bench's split
 *  (41 frames, N = 1024) fit to residual 5.7e-11 and Δτ to 6e-13 here, the same as at 1e-11, which takes 1.8 times
 *  the steps (measured); far below the 1e-6 a verdict needs */
export const FLOW_TOLERANCE = 1e-10;
/** when the frames hold spectral amplitude beyond the flow's 2/3-rule band (modes m > N/3) above PAD_TAIL relative
 * to the rest, the flow runs on PAD_FACTOR·N points, whose band (2N/3 modes) holds all N/2 modes of a frame */
export const PAD_FACTOR = 2;
/** relative amplitude beyond N/3 that may be dropped: contributes ≲ 1e-12 ‖u‖ to the misfit, far below any tolerance */
export const PAD_TAIL = 1e-10;
/** samples of F(τ) per bracket (and per extension): resolves the basin of the minimum for smooth flows (common practice) */
export const SCAN_POINTS = 16;
/** the first bracket is BRACKET_FACTOR times the first-order estimate ‖Δu‖/‖u_τ‖ of Δτ */
export const BRACKET_FACTOR = 1.5;
/** an extension doubles the bracket (continuing the trajectory): geometric growth reaches any Δτ in log steps */
export const GROWTH_FACTOR = 2;
/** default largest Δτ, as a multiple of the first bracket: 2⁷ doublings beyond a first-order estimate means the flow
 * does not reach the next frame (common practice) */
export const DEFAULT_MAX_TAU_FACTOR = 128;
/** Brent's relative tolerance on τ; above the ~1e-11 dense-output noise, far below the 1e-6 accuracy asked of Δτ */
export const BRENT_RTOL = 1e-10;
/** Brent's iteration cap (each iteration is one dense-output evaluation; converges in ~10–30) */
export const BRENT_MAX_ITERATIONS = 200;
/** Newton steps on C′(s) = 0 stop below this fraction of the grid spacing (round-off level of the shift) */
export const SHIFT_TOLERANCE = 1e-12;
/** Newton's iteration cap for the shift (quadratic convergence from the parabolic start needs 2–4) */
export const SHIFT_MAX_ITERATIONS = 20;
/** ‖u_{k+1} − u_k‖ below this times ‖u_k‖ counts as static (a few ulps of float64) */
export const STATIC_RTOL = 1e-14;
/** sin² of the angle between the KdV rate and u_ξ below this: the flow is a pure translation (one soliton);
 * round-off of the spectral products is ~1e-15, a designed one-soliton sequence (band-limited frames, flow
 * tolerance 1e-10) measures 1.4e-10, a second soliton of depth 1e-4 gives ~1e-8 */
export const DEGENERATE_SIN2 = 1e-9;
/** integrator step budget per extension of the trajectory */
export const FLOW_MAX_STEPS = 200_000;
/** the top SAMPLING_BAND fraction of a frame's modes measures its sampling (aliasing) error: for a spectrum that
 * decays geometrically the first unresolved modes, folded back, are as large as the last resolved ones (common practice) */
export const SAMPLING_BAND = 0.1;
/** default pass threshold on the residual: exact frames reach ~1e-9, a 1 % depth error ~1e-2 */
export const DEFAULT_PASS_TOLERANCE = 1e-6;

export interface IntervalFitOptions {
  /** drift c known in advance (e.g. 0): the shift is s = cτ and only τ is fitted */
  fixedDrift?: number;
  /** largest Δτ searched (default DEFAULT_MAX_TAU_FACTOR times the first bracket) */
  maxTau?: number;
  /** first bracket [0, tauGuess] instead of the first-order estimate */
  tauGuess?: number;
  /** flow tolerance (default FLOW_TOLERANCE) */
  flowTolerance?: number;
}

export interface DegenerateMotion {
  /** KdV speed v of the translating frame: u_τ = −v u_ξ (4κ² for a soliton) */
  speed: number;
  /** the determined displacement (v + c)Δτ between the frames, in ξ */
  displacement: number;
}

export interface IntervalFit {
  /** fitted Δτ ≥ 0 */
  dtau: number;
  /** fitted drift c (= shift/Δτ; 0 when Δτ = 0) */
  drift: number;
  /** translation s = cΔτ applied after the flow, in ξ */
  shift: number;
  /** ‖S_s Φ_Δτ(u_k) − u_{k+1}‖ / ‖u_{k+1} − u_k‖ (0 for static frames) */
  residual: number;
  /** u_{k+1} = u_k to round-off: Δτ = 0 exactly, residual 0 */
  static: boolean;
  /** the frames' own sampling error (amplitude of their top SAMPLING_BAND of modes, both frames) relative to
   * ‖u_{k+1} − u_k‖: residuals near or below it are consistent within the frames' resolution */
  samplingFloor: number;
  /** one-soliton-like frame: only the displacement is determined (module comment) */
  degenerate: DegenerateMotion | null;
  /** the best τ lies at maxTau: the bracket could not enclose a minimum */
  atLimit: boolean;
  /** accepted flow steps and misfit evaluations spent */
  flowSteps: number;
  evaluations: number;
}

/** spectral workspace for one interval on the work grid, the frames' or the padded one (allocated per call: no shared state) */
interface Workspace {
  grid: Grid;
  fft: RealFFT;
  /** modes m = 0 … modes − 1 enter the norms (Nyquist of the padded grid excluded) */
  modes: number;
  uk: Float64Array;
  ukHat: Float64Array;
  nextHat: Float64Array;
  vPhys: Float64Array;
  vHat: Float64Array;
  corrHat: Float64Array;
  corr: Float64Array;
  /** Σ over both frames of sqrt(Σ_top w_m |û_m|²) on the frames' own grid, in the scale of the work spectra */
  topAmplitude: number;
}

/** sqrt(Σ w_m |û_m|²) over the top SAMPLING_BAND of the modes below Nyquist of an n-point half spectrum */
function topModes(spec: Float64Array, n: number): number {
  let s = 0;
  for (let m = Math.floor((1 - SAMPLING_BAND) * (n / 2)); m < n / 2; m++) s += 2 * (spec[2 * m] ** 2 + spec[2 * m + 1] ** 2);
  return Math.sqrt(s);
}

/** sqrt(Σ_{m > N/3} |û_m|² / Σ_{1 ≤ m ≤ N/3} |û_m|²): what the flow's 2/3-rule band would drop */
function bandTail(spec: Float64Array, n: number): number {
  const cut = Math.floor(n / 3);
  let kept = 0, tail = 0;
  for (let m = 1; m < n / 2; m++) {
    const e = spec[2 * m] * spec[2 * m] + spec[2 * m + 1] * spec[2 * m + 1];
    if (m > cut) tail += e;
    else kept += e;
  }
  return kept > 0 ? Math.sqrt(tail / kept) : 0;
}

/** spectra of both frames, on the frames' grid or (if they reach beyond the flow's band) on the padded one */
function makeWorkspace(grid: Grid, uk: Float64Array, ukNext: Float64Array): Workspace {
  let n = grid.n;
  let fft = new RealFFT(n);
  const buf = () => new Float64Array(n + 2);
  let ukHat = buf();
  let nextHat = buf();
  fft.forward(uk, ukHat);
  fft.forward(ukNext, nextHat);
  let work = grid;
  let u = uk;
  const top = topModes(ukHat, n) + topModes(nextHat, n);
  if (Math.max(bandTail(ukHat, n), bandTail(nextHat, n)) > PAD_TAIL) {
    n *= PAD_FACTOR;
    work = makeGrid(grid.length, n);
    fft = new RealFFT(n);
    u = resample(uk, n);
    ukHat = buf();
    nextHat = buf();
    fft.forward(u, ukHat);
    fft.forward(resample(ukNext, n), nextHat);
  }
  // band-limited interpolation to more points scales the unnormalised DFT by the ratio of the point counts
  const topAmplitude = (top * n) / grid.n;
  return { grid: work, fft, modes: n / 2, uk: u, ukHat, nextHat, vPhys: new Float64Array(n), vHat: buf(), corrHat: buf(), corr: new Float64Array(n), topAmplitude };
}

/** Σ_m w_m |a_m − b_m|² over the first `modes` modes (w₀ = 1, else 2): N²‖a − b‖²/N by Parseval */
function spectralDistance2(a: Float64Array, b: Float64Array, modes: number): number {
  let s = 0;
  for (let m = 0; m < modes; m++) {
    const dr = a[2 * m] - b[2 * m];
    const di = a[2 * m + 1] - b[2 * m + 1];
    s += (m === 0 ? 1 : 2) * (dr * dr + di * di);
  }
  return s;
}

/** Σ_m w_m |v̂_m e^{−ik_m s} − ŵ_m|²: the misfit of v translated by s (same scale as spectralDistance2) */
function shiftedMisfit(v: Float64Array, w: Float64Array, k: Float64Array, modes: number, s: number): number {
  let sum = 0;
  for (let m = 0; m < modes; m++) {
    const c = Math.cos(k[m] * s), sn = Math.sin(k[m] * s);
    const vr = v[2 * m] * c + v[2 * m + 1] * sn;
    const vi = v[2 * m + 1] * c - v[2 * m] * sn;
    const dr = vr - w[2 * m];
    const di = vi - w[2 * m + 1];
    sum += (m === 0 ? 1 : 2) * (dr * dr + di * di);
  }
  return sum;
}

/**
 * The translation s maximising C(s) = Σ_m w_m Re(v̂_m ŵ_m* e^{−ik_m s}), i.e. minimising ‖S_s v − w‖: grid
 * maximum of C (one inverse FFT of v̂* ŵ gives C(j·dx)/N), parabolic refinement, then Newton on
 * C′(s) = Σ w_m k_m Im(Q_m e^{−ik_m s}), C″(s) = −Σ w_m k_m² Re(Q_m e^{−ik_m s}), Q_m = v̂_m ŵ_m*.
 */
function bestShift(ws: Workspace, v: Float64Array): number {
  const { modes, nextHat: w, corrHat, corr, fft } = ws;
  const n = ws.grid.n;
  const dx = ws.grid.dx;
  const k = ws.grid.kHalf;
  corrHat.fill(0);
  for (let m = 0; m < modes; m++) {
    // conj(v) · w
    corrHat[2 * m] = v[2 * m] * w[2 * m] + v[2 * m + 1] * w[2 * m + 1];
    corrHat[2 * m + 1] = v[2 * m] * w[2 * m + 1] - v[2 * m + 1] * w[2 * m];
  }
  fft.inverse(corrHat, corr);
  let j = 0;
  for (let i = 1; i < n; i++) if (corr[i] > corr[j]) j = i;
  const cm = corr[(j + n - 1) % n], c0 = corr[j], cp = corr[(j + 1) % n];
  const den = cm - 2 * c0 + cp;
  const offset = den < 0 ? Math.max(-0.5, Math.min(0.5, (0.5 * (cm - cp)) / den)) : 0;
  let s = ((j > n / 2 ? j - n : j) + offset) * dx;
  for (let it = 0; it < SHIFT_MAX_ITERATIONS; it++) {
    let d1 = 0, d2 = 0;
    for (let m = 1; m < modes; m++) {
      const qr = v[2 * m] * w[2 * m] + v[2 * m + 1] * w[2 * m + 1];
      const qi = v[2 * m + 1] * w[2 * m] - v[2 * m] * w[2 * m + 1];
      const c = Math.cos(k[m] * s), sn = Math.sin(k[m] * s);
      // Q e^{−iks} = (qr c + qi sn) + i(qi c − qr sn)
      d1 += 2 * k[m] * (qi * c - qr * sn);
      d2 -= 2 * k[m] * k[m] * (qr * c + qi * sn);
    }
    if (!(d2 < 0)) break;
    const step = -d1 / d2;
    if (Math.abs(step) > dx) break;
    s += step;
    if (Math.abs(step) <= SHIFT_TOLERANCE * dx) break;
  }
  return s;
}

/**
 * The KdV rate at u_k and its relation to a translation: r = 6uu_ξ − u_ξξξ, sin² of its angle with u_ξ,
 * the translation speed v = −⟨r, u_ξ⟩/⟨u_ξ, u_ξ⟩, ‖r − c u_ξ‖ and the part ‖r + v u_ξ‖ no translation can
 * mimic (grid norms), for the bracket estimate.
 */
function kdvRate(ws: Workspace, drift: number): { sin2: number; speed: number; rateNorm: number; perpNorm: number } {
  const { fft, grid, modes, ukHat } = ws;
  const n = grid.n;
  const k = grid.kHalf;
  const slope = new Float64Array(n + 2);
  const cube = new Float64Array(n + 2);
  for (let m = 0; m < modes; m++) {
    // u_ξ ↔ ik û ; u_ξξξ ↔ −ik³ û
    slope[2 * m] = -k[m] * ukHat[2 * m + 1];
    slope[2 * m + 1] = k[m] * ukHat[2 * m];
    cube[2 * m] = k[m] ** 3 * ukHat[2 * m + 1];
    cube[2 * m + 1] = -(k[m] ** 3) * ukHat[2 * m];
  }
  const ux = new Float64Array(n);
  const uxxx = new Float64Array(n);
  fft.inverse(slope, ux);
  fft.inverse(cube, uxxx);
  let rr = 0, rs = 0, ss = 0, rc = 0;
  for (let j = 0; j < n; j++) {
    const r = 6 * ws.uk[j] * ux[j] - uxxx[j];
    rr += r * r;
    rs += r * ux[j];
    ss += ux[j] * ux[j];
    const q = r - drift * ux[j];
    rc += q * q;
  }
  const speed = ss > 0 ? -rs / ss : 0;
  let perp = 0;
  for (let j = 0; j < n; j++) {
    const p = 6 * ws.uk[j] * ux[j] - uxxx[j] + speed * ux[j];
    perp += p * p;
  }
  return { sin2: rr > 0 ? perp / rr : 0, speed, rateNorm: Math.sqrt(rc), perpNorm: Math.sqrt(perp) };
}

/** the driftless trajectory from u_k as a chain of dense outputs, extended on demand */
interface Trajectory {
  segments: { start: number; end: number; dense: DenseFlow; last: Float64Array }[];
  steps: number;
}

function extendTrajectory(ws: Workspace, traj: Trajectory, end: number, tolerance: number): void {
  const last = traj.segments[traj.segments.length - 1];
  const start = last ? last.end : 0;
  const from = last ? last.last : ws.uk;
  let run;
  try {
    run = integrateFlow(ws.grid, naturalFlowEquation('quantum'), from, { tolerance, frames: [end - start], maxSteps: FLOW_MAX_STEPS, detectBreaking: false });
  } catch (e) {
    throw new NumericalError(`flow fit: the KdV flow from the frame could not be followed to τ = ${end} (${e instanceof Error ? e.message : String(e)})`);
  }
  if (run.breaking) throw new NumericalError(`flow fit: the KdV flow from the frame stalled: ${run.breaking.reason}`);
  traj.steps += run.stats.accepted;
  traj.segments.push({ start, end, dense: run.dense, last: run.frames[run.frames.length - 1] });
}

/** Φ_τ(u_k) as a half spectrum in ws.vHat (τ inside the trajectory) */
function flowSpectrum(ws: Workspace, traj: Trajectory, tau: number): Float64Array {
  const seg = traj.segments.find((sg) => tau <= sg.end) ?? traj.segments[traj.segments.length - 1];
  seg.dense.at(Math.max(0, Math.min(tau - seg.start, seg.end - seg.start)), ws.vPhys);
  ws.fft.forward(ws.vPhys, ws.vHat);
  return ws.vHat;
}

/** Brent's minimiser on [a, b] from the point x (f(x) = fx); Brent 1973, ch. 5 (procedure localmin) */
export function brentMinimize(f: (x: number) => number, a: number, b: number, x: number, fx: number, rtol: number, atol: number, maxIterations: number): { x: number; fx: number; iterations: number } {
  const golden = 0.5 * (3 - Math.sqrt(5));
  let w = x, v = x, fw = fx, fv = fx;
  let d = 0, e = 0;
  for (let it = 0; it < maxIterations; it++) {
    const xm = 0.5 * (a + b);
    const tol1 = rtol * Math.abs(x) + atol;
    const tol2 = 2 * tol1;
    if (Math.abs(x - xm) <= tol2 - 0.5 * (b - a)) return { x, fx, iterations: it };
    let parabolic = false;
    if (Math.abs(e) > tol1) {
      const r = (x - w) * (fx - fv);
      let q = (x - v) * (fx - fw);
      let p = (x - v) * q - (x - w) * r;
      q = 2 * (q - r);
      if (q > 0) p = -p;
      q = Math.abs(q);
      const eOld = e;
      e = d;
      if (Math.abs(p) < Math.abs(0.5 * q * eOld) && p > q * (a - x) && p < q * (b - x)) {
        d = p / q;
        parabolic = true;
        const u = x + d;
        if (u - a < tol2 || b - u < tol2) d = xm >= x ? tol1 : -tol1;
      }
    }
    if (!parabolic) {
      e = x >= xm ? a - x : b - x;
      d = golden * e;
    }
    const u = Math.abs(d) >= tol1 ? x + d : x + (d >= 0 ? tol1 : -tol1);
    const fu = f(u);
    if (fu <= fx) {
      if (u >= x) a = x;
      else b = x;
      v = w; fv = fw;
      w = x; fw = fx;
      x = u; fx = fu;
    } else {
      if (u < x) a = u;
      else b = u;
      if (fu <= fw || w === x) {
        v = w; fv = fw;
        w = u; fw = fu;
      } else if (fu <= fv || v === x || v === w) {
        v = u; fv = fu;
      }
    }
  }
  return { x, fx, iterations: maxIterations };
}

/**
 * Fit Δτ ≥ 0 and the drift c carrying frame u_k to u_{k+1} under the KdV flow (module comment). grid is the
 * frames' periodic grid (natural units, physics.md §3); the frames are not modified.
 */
export function fitInterval(grid: Grid, uk: Float64Array, ukNext: Float64Array, opts: IntervalFitOptions = {}): IntervalFit {
  if (uk.length !== grid.n || ukNext.length !== grid.n) throw new RangeError(`fitInterval: frames must have ${grid.n} points, got ${uk.length} and ${ukNext.length}`);
  if (opts.maxTau !== undefined && !(opts.maxTau > 0)) throw new RangeError(`fitInterval: maxTau must be positive, got ${opts.maxTau}`);
  const ws = makeWorkspace(grid, uk, ukNext);
  const change2 = spectralDistance2(ws.nextHat, ws.ukHat, ws.modes);
  const size2 = spectralDistance2(ws.ukHat, new Float64Array(ws.ukHat.length), ws.modes);
  if (change2 <= STATIC_RTOL * STATIC_RTOL * size2) {
    return { dtau: 0, drift: opts.fixedDrift ?? 0, shift: 0, residual: 0, samplingFloor: 0, static: true, degenerate: null, atLimit: false, flowSteps: 0, evaluations: 0 };
  }
  const rate = kdvRate(ws, opts.fixedDrift ?? 0);
  const degenerate = opts.fixedDrift === undefined && rate.sin2 < DEGENERATE_SIN2;
  const drift = opts.fixedDrift ?? (degenerate ? 0 : undefined);
  const k = ws.grid.kHalf;
  const free = drift === undefined;
  const traj: Trajectory = { segments: [], steps: 0 };
  let evaluations = 0;
  let lastShift = 0;
  const misfit = (tau: number): number => {
    evaluations++;
    const v = flowSpectrum(ws, traj, tau);
    lastShift = drift === undefined ? bestShift(ws, v) : drift * tau;
    return shiftedMisfit(v, ws.nextHat, k, ws.modes, lastShift);
  };
  // first-order estimate of Δτ: the time the rate at u_k needs to make the observed change; with a free drift,
  // both without their translation parts (Parseval: the spectral norm is √N times the grid norm)
  const apart = free ? shiftedMisfit(ws.ukHat, ws.nextHat, k, ws.modes, bestShift(ws, ws.ukHat)) : change2;
  const estimate = Math.sqrt(apart) / Math.max((free ? rate.perpNorm : rate.rateNorm) * Math.sqrt(ws.grid.n), Number.MIN_VALUE);
  if (opts.tauGuess !== undefined && !(opts.tauGuess > 0 && Number.isFinite(opts.tauGuess))) throw new RangeError(`fitInterval: tauGuess must be positive and finite, got ${opts.tauGuess}`);
  const first = opts.tauGuess ?? BRACKET_FACTOR * estimate;
  if (!Number.isFinite(first)) {
    // the flow (with the given drift) leaves u_k where it is, e.g. a constant: no τ changes the misfit at τ = 0
    const s0 = free ? bestShift(ws, ws.ukHat) : 0;
    const f0 = shiftedMisfit(ws.ukHat, ws.nextHat, k, ws.modes, s0);
    return { dtau: 0, drift: drift ?? 0, shift: s0, residual: Math.sqrt(f0 / change2), samplingFloor: ws.topAmplitude / Math.sqrt(change2), static: false, degenerate: null, atLimit: false, flowSteps: 0, evaluations: 1 };
  }
  const maxTau = opts.maxTau ?? DEFAULT_MAX_TAU_FACTOR * first;
  const tolerance = opts.flowTolerance ?? FLOW_TOLERANCE;
  const best = scanAndRefine(misfit, (end) => extendTrajectory(ws, traj, end, tolerance), Math.min(first, maxTau), maxTau);
  const fx = misfit(best.tau);
  const shift = lastShift;
  const dtau = best.tau;
  return {
    dtau,
    drift: drift ?? (dtau > 0 ? shift / dtau : 0),
    shift,
    residual: Math.sqrt(fx / change2),
    samplingFloor: ws.topAmplitude / Math.sqrt(change2),
    static: false,
    degenerate: degenerate ? { speed: rate.speed, displacement: rate.speed * dtau + shift } : null,
    atLimit: best.atLimit,
    flowSteps: traj.steps,
    evaluations,
  };
}

/**
 * Coarse scan of F on [0, τ_hi] (SCAN_POINTS intervals), extending τ_hi by GROWTH_FACTOR (and scanning the new
 * part) while the smallest sample is the last one and τ_hi < maxTau; then Brent on the two scan intervals
 * around the smallest sample.
 */
function scanAndRefine(f: (tau: number) => number, extendTo: (end: number) => void, first: number, maxTau: number): { tau: number; atLimit: boolean } {
  const taus: number[] = [];
  const values: number[] = [];
  let hi = 0;
  let next = first;
  for (;;) {
    extendTo(next);
    const lo = hi;
    hi = next;
    for (let i = taus.length === 0 ? 0 : 1; i <= SCAN_POINTS; i++) {
      const t = lo + ((hi - lo) * i) / SCAN_POINTS;
      taus.push(t);
      values.push(f(t));
    }
    let j = 0;
    for (let i = 1; i < values.length; i++) if (values[i] < values[j]) j = i;
    const atEdge = j === values.length - 1;
    if (!atEdge || hi >= maxTau) {
      const a = taus[Math.max(0, j - 1)];
      const b = taus[Math.min(taus.length - 1, j + 1)];
      const r = brentMinimize(f, a, b, taus[j], values[j], BRENT_RTOL, BRENT_RTOL * (b - a), BRENT_MAX_ITERATIONS);
      return { tau: r.x, atLimit: atEdge && r.x >= hi - BRENT_RTOL * hi };
    }
    next = Math.min(maxTau, hi * GROWTH_FACTOR);
  }
}

export interface SequenceOptions extends IntervalFitOptions {
  /** an interval passes when its residual is at most this (default DEFAULT_PASS_TOLERANCE) */
  passTolerance?: number;
}

export interface SequenceIntervalFit extends IntervalFit {
  /** the interval joins frames index and index + 1 */
  index: number;
  pass: boolean;
}

export interface SequenceFit {
  intervals: SequenceIntervalFit[];
  /** τ_k = Σ_{i<k} Δτ_i at every frame (τ_0 = 0) */
  tau: number[];
  /** every interval passes */
  admissible: boolean;
  maxResidual: number;
  /** index of the interval with the largest residual */
  worstInterval: number;
  failed: number[];
  degenerateIntervals: number[];
  staticIntervals: number[];
  passTolerance: number;
}

/** Fit every interval of a frame sequence independently (fitInterval) and sum the Δτ into τ_k. */
export function fitSequence(grid: Grid, frames: readonly Float64Array[], opts: SequenceOptions = {}): SequenceFit {
  if (frames.length < 2) throw new RangeError(`fitSequence: need at least two frames, got ${frames.length}`);
  const passTolerance = opts.passTolerance ?? DEFAULT_PASS_TOLERANCE;
  const intervals: SequenceIntervalFit[] = [];
  for (let i = 0; i + 1 < frames.length; i++) {
    const fit = fitInterval(grid, frames[i], frames[i + 1], opts);
    intervals.push({ ...fit, index: i, pass: fit.residual <= passTolerance });
  }
  return summarise(intervals, passTolerance);
}

/** cumulative τ_k and the pass/fail summary of per-interval fits (in interval order) */
export function summarise(intervals: SequenceIntervalFit[], passTolerance: number): SequenceFit {
  const tau = [0];
  for (const it of intervals) tau.push(tau[tau.length - 1] + it.dtau);
  let worst = 0;
  for (const it of intervals) if (it.residual > intervals[worst].residual) worst = it.index;
  const pick = (p: (it: SequenceIntervalFit) => boolean) => intervals.filter(p).map((it) => it.index);
  return {
    intervals,
    tau,
    admissible: intervals.every((it) => it.pass),
    maxResidual: intervals[worst].residual,
    worstInterval: worst,
    failed: pick((it) => !it.pass),
    degenerateIntervals: pick((it) => it.degenerate !== null),
    staticIntervals: pick((it) => it.static),
    passTolerance,
  };
}

/** does either frame hold amplitude beyond the flow's 2/3-rule band (then the flow runs on PAD_FACTOR·N points)? */
function needsPadding(fft: RealFFT, n: number, frames: readonly Float64Array[]): boolean {
  const spec = new Float64Array(n + 2);
  return frames.some((u) => {
    fft.forward(u, spec);
    return bandTail(spec, n) > PAD_TAIL;
  });
}

/** S_s v(ξ) = v(ξ − s) by the Fourier shift theorem (Nyquist mode dropped, as in the misfit) */
function translate(fft: RealFFT, grid: Grid, v: Float64Array, s: number): Float64Array {
  const n = grid.n;
  const spec = new Float64Array(n + 2);
  fft.forward(v, spec);
  for (let m = 0; m <= n / 2; m++) {
    if (m === n / 2) {
      spec[2 * m] = spec[2 * m + 1] = 0;
      continue;
    }
    const c = Math.cos(grid.kHalf[m] * s), sn = Math.sin(grid.kHalf[m] * s);
    const re = spec[2 * m] * c + spec[2 * m + 1] * sn;
    const im = spec[2 * m + 1] * c - spec[2 * m] * sn;
    spec[2 * m] = re;
    spec[2 * m + 1] = im;
  }
  const out = new Float64Array(n);
  fft.inverse(spec, out);
  return out;
}

/**
 * The fitted map of one interval applied to u: S_s Φ_Δτ(u) (module comment), on the PAD_FACTOR·N grid when u or
 * the interval's target frame reaches beyond the flow's band (as the fit decides), returned on the frames' grid.
 * Returns the accepted flow steps with the frame.
 */
export function applyIntervalMap(grid: Grid, u: Float64Array, target: Float64Array, dtau: number, shift: number, tolerance = FLOW_TOLERANCE): { frame: Float64Array; steps: number } {
  if (!(dtau >= 0)) throw new RangeError(`applyIntervalMap: Δτ must be ≥ 0, got ${dtau}`);
  const fft = new RealFFT(grid.n);
  const pad = needsPadding(fft, grid.n, [u, target]);
  const work = pad ? makeGrid(grid.length, PAD_FACTOR * grid.n) : grid;
  const workFft = pad ? new RealFFT(work.n) : fft;
  let v = pad ? resample(u, work.n) : Float64Array.from(u);
  let steps = 0;
  if (dtau > 0) {
    const run = integrateFlow(work, naturalFlowEquation('quantum'), v, { tolerance, frames: [dtau], maxSteps: FLOW_MAX_STEPS, detectBreaking: false, keepDense: false });
    steps = run.stats.accepted;
    v = run.frames[run.frames.length - 1];
  }
  if (shift !== 0) v = translate(workFft, work, v, shift);
  return { frame: pad ? resample(v, grid.n) : v, steps };
}

/**
 * The rate of the fitted flow at a frame, u_τ = 6uu_ξ − u_ξξξ − c u_ξ (natural units, physics.md §3), with the
 * product formed on PAD_FACTOR·N points (exact for a band-limited u) and projected back onto the frame's grid.
 */
export function flowRate(grid: Grid, u: Float64Array, drift: number): Float64Array {
  const fine = makeGrid(grid.length, PAD_FACTOR * grid.n);
  const v = resample(u, fine.n);
  const fft = new RealFFT(fine.n);
  const spec = new Float64Array(fine.n + 2);
  const slope = new Float64Array(fine.n + 2);
  const cube = new Float64Array(fine.n + 2);
  fft.forward(v, spec);
  for (let m = 0; m < fine.n / 2; m++) {
    const k = fine.kHalf[m];
    slope[2 * m] = -k * spec[2 * m + 1];
    slope[2 * m + 1] = k * spec[2 * m];
    cube[2 * m] = k ** 3 * spec[2 * m + 1];
    cube[2 * m + 1] = -(k ** 3) * spec[2 * m];
  }
  const ux = new Float64Array(fine.n);
  const uxxx = new Float64Array(fine.n);
  fft.inverse(slope, ux);
  fft.inverse(cube, uxxx);
  const r = new Float64Array(fine.n);
  for (let j = 0; j < fine.n; j++) r[j] = 6 * v[j] * ux[j] - uxxx[j] - drift * ux[j];
  return resample(r, grid.n);
}
