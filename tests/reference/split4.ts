/**
 * Reference scheme 'split4' (tests only): H = D + B with the k-diagonal part D = c₁k + c₂k² + c₃k³ exact in Fourier
 * space and B = v + b{w,k} by Lanczos at the stage midpoints; Strang steps of the time-extended system composed by
 * Suzuki's five-stage fractal (Suzuki, Phys. Lett. A 146, 319, 1990; Hairer, Lubich & Wanner, Geometric Numerical
 * Integration, 2nd ed. 2006, §II.4), p = 1/(4 − 4^{1/3}). Unitary and fourth order for smooth problems; for the
 * cubic drive it stays pre-asymptotic (Cauchy differences 0.19, 0.13, 0.10 at 200/400/800 steps, N = 256,
 * measured), so it is not the production scheme. Needs ∫D ds from the Hamiltonian (`kineticIntegral`).
 */
import { emptyTerms, normBound, type OperatorTerms } from '../../src/quantum/hamiltonian.ts';
import { defineScheme, type DrivenHamiltonian, type SchemeContext, type SchemeDefinition } from '../../src/quantum/scheme.ts';
import { TermsBuffer } from '../../src/quantum/terms-buffer.ts';

/** Suzuki fractal p = 1/(4 − 4^{1/3}); stage fractions p, p, 1 − 4p, p, p */
const SUZUKI_P = 1 / (4 - Math.cbrt(4));
const SUZUKI_STAGES: readonly number[] = Object.freeze([SUZUKI_P, SUZUKI_P, 1 - 4 * SUZUKI_P, SUZUKI_P, SUZUKI_P]);

/** a Hamiltonian that also gives out[0..2] = ∫_{sa}^{sb} (c₁, c₂, c₃) ds */
export interface KineticIntegrable extends DrivenHamiltonian {
  kineticIntegral(sa: number, sb: number, out: Float64Array): void;
}

function isKineticIntegrable(H: DrivenHamiltonian): H is KineticIntegrable {
  return typeof (H as Partial<KineticIntegrable>).kineticIntegral === 'function';
}

class Split4Cache {
  readonly raw: OperatorTerms = emptyTerms();
  readonly b: TermsBuffer;
  readonly kint = new Float64Array(3);
  readonly spec: Float64Array;
  readonly spec2: Float64Array;
  readonly k2: Float64Array;
  readonly k3: Float64Array;
  readonly apply: (x: Float64Array, y: Float64Array) => void;
  constructor(readonly ctx: SchemeContext) {
    const { grid } = ctx;
    this.b = new TermsBuffer(grid.n);
    this.spec = new Float64Array(2 * grid.n);
    this.spec2 = new Float64Array(2 * grid.n);
    this.k2 = Float64Array.from(grid.k, (k) => k * k);
    this.k3 = Float64Array.from(grid.kOdd, (k) => k * k * k);
    this.apply = (x, y) => ctx.op.apply(this.b.t, x, y);
  }
}

/** ψ ← exp(−i∫D) ψ with ∫D = I₁k + I₂k² + I₃k³ (exact, diagonal in Fourier space) */
function kineticFlow(c: Split4Cache, psi: Float64Array): void {
  const { grid, op } = c.ctx;
  const { spec, spec2, k2, k3, kint } = c;
  const kOdd = grid.kOdd;
  op.fft.forward(psi, spec);
  for (let j = 0; j < grid.n; j++) {
    const ph = kint[0] * kOdd[j] + kint[1] * k2[j] + kint[2] * k3[j];
    const co = Math.cos(ph);
    const s = -Math.sin(ph);
    const re = spec[2 * j];
    const im = spec[2 * j + 1];
    spec2[2 * j] = co * re - s * im;
    spec2[2 * j + 1] = co * im + s * re;
  }
  op.fft.inverse(spec2, psi);
}

/** one Suzuki-composed Strang step with exact kinetic flow */
function split4Step(c: Split4Cache, H: DrivenHamiltonian, s: number, h: number, states: Float64Array[], tolK: number): void {
  if (!isKineticIntegrable(H)) throw new RangeError('split4 needs a Hamiltonian with kineticIntegral');
  let t = s;
  let pending = t; // start of the not yet applied kinetic flow
  for (const g of SUZUKI_STAGES) {
    const hs = g * h;
    const mid = t + hs / 2;
    H.kineticIntegral(pending, mid, c.kint);
    for (const psi of states) kineticFlow(c, psi);
    H.terms(mid, c.raw);
    c.b.load(c.raw);
    const bt = c.b.t;
    bt.c1 = 0;
    bt.c2 = 0;
    bt.c3 = 0;
    const nb = normBound(c.ctx.grid, bt);
    for (const psi of states) c.ctx.krylov.expm(c.apply, psi, hs, tolK, psi, nb);
    pending = mid;
    t += hs;
  }
  H.kineticIntegral(pending, s + h, c.kint);
  for (const psi of states) kineticFlow(c, psi);
}

/** 'split4': Suzuki-composed Strang splitting (Suzuki, Phys. Lett. A 146, 319, 1990; Hairer, Lubich & Wanner 2006, §II.4) */
export const SPLIT4: SchemeDefinition = defineScheme('split4', 4, 'Strang splitting D exact / B by Lanczos, Suzuki five-stage composition (Suzuki 1990; Hairer, Lubich & Wanner 2006, §II.4)',
  (ctx) => new Split4Cache(ctx), split4Step);
