/**
 * Schrödinger schemes from the embedded exponential Runge–Kutta pairs of integrate/etd-pair.ts ('etd53': Whalen,
 * Brio & Moloney, J. Comput. Phys. 280, 579, 2015, §3; 'etd43': Krogstad 2005 with their embedding), with the
 * k-diagonal part frozen at the step midpoint and treated exactly, as in etd4.ts:
 *
 *     ψ̂' = L ψ̂ + N(s, ψ̂),   L = −iD(s + h/2),   N = −i[(D(s) − D(s + h/2)) ψ̂ + (B(s) ψ)^]   (fourier-rhs.ts).
 *
 * The FSAL stage N(y₁) becomes the next step's first stage after one pointwise correction, −i(D_mid − D′_mid)ŷ₁,
 * for the new midpoint diagonal D′_mid. After each accepted step every state is projected back to its norm (Hairer,
 * Lubich & Wanner, Geometric Numerical Integration, 2nd ed. 2006, §IV.4), the FSAL stage scaled with it (N is
 * linear in ψ̂). Error estimate: the part of the embedded difference orthogonal to the new state.
 *
 * Split into the table, preallocated buffers (`EtdPairCache`) and the step (`etdPairAttempt`, `etdPairAccept`).
 */
import { etdPairCoefficients, etdPairStep, etdPairWorkspace, refillEtdPairCoefficients, KROGSTAD_ETD43, WHALEN_ETD53, type EtdPairCoefficients, type EtdPairTable, type EtdPairWorkspace } from '../integrate/etd-pair.ts';
import type { StageRhs } from '../integrate/etdrk4.ts';
import type { Grid } from '../spectral/grid.ts';
import { norm2, perpendicularNorm } from '../linalg/complex.ts';
import { emptyTerms, type OperatorTerms } from './hamiltonian.ts';
import { FourierRhs, type DiagonalReference } from './fourier-rhs.ts';
import { TermsBuffer } from './terms-buffer.ts';
import type { DrivenHamiltonian, EmbeddedStepScheme, SchemeContext, SchemeDefinition } from './scheme.ts';

/** the buffers of one instance */
export class EtdPairCache {
  readonly grid: Grid;
  readonly table: EtdPairTable;
  readonly frhs: FourierRhs;
  /** distinct nodes (ascending: 0, …, 1 with the midpoint among them or added) and the node of each stage index
   *  (FSAL stage last, at 1) */
  readonly nodes: number[];
  readonly nodeOf: number[];
  readonly mid: number;
  readonly raw: OperatorTerms = emptyTerms();
  readonly terms: TermsBuffer[];
  /** D(s + h/2) of the trial step and of the step that produced the carried stage */
  readonly midRef: DiagonalReference = { r1: 0, r2: 0, r3: 0 };
  readonly carriedRef: DiagonalReference = { r1: 0, r2: 0, r3: 0 };
  /** L_j = i·lim[j] = −iD_j(s + h/2) */
  readonly lim: Float64Array;
  coefficients: EtdPairCoefficients | null = null;
  /** the diagonal the coefficients were computed for (a constant diagonal and step reuse them) */
  readonly coefficientRef: DiagonalReference = { r1: Number.NaN, r2: Number.NaN, r3: Number.NaN };
  readonly ws: EtdPairWorkspace;
  readonly rhs: StageRhs;
  /** per state: ŷ_n, N(ŷ_n), the trial y₁, N(y₁), the embedded difference */
  yHat: Float64Array[] = [];
  nHat: Float64Array[] = [];
  trial: Float64Array[] = [];
  nTrial: Float64Array[] = [];
  readonly err: Float64Array;
  /** yHat and nHat hold the first stage of these states under this H at fsalS (NaN: none); a retry or the next step
   *  reuses them only for the same time, the same state arrays and the same Hamiltonian */
  fsalS = Number.NaN;
  fsalStates: readonly Float64Array[] | null = null;
  fsalH: DrivenHamiltonian | null = null;
  lastS = Number.NaN;
  lastH = Number.NaN;

  constructor(ctx: SchemeContext, table: EtdPairTable) {
    const n = ctx.grid.n;
    this.grid = ctx.grid;
    this.table = table;
    this.frhs = new FourierRhs(ctx.grid, ctx.op);
    const all = [...table.nodes, 1];
    this.nodes = [...new Set([...all, 0.5])].sort((x, y) => x - y);
    this.nodeOf = all.map((c) => this.nodes.indexOf(c));
    this.mid = this.nodes.indexOf(0.5);
    this.terms = this.nodes.map(() => new TermsBuffer(n));
    this.lim = new Float64Array(n);
    this.ws = etdPairWorkspace(table, n);
    this.err = new Float64Array(2 * n);
    this.rhs = (y, out, stage) => this.frhs.apply(this.terms[this.nodeOf[stage]], this.midRef, y, out);
  }

  ensure(count: number): void {
    const len = 2 * this.grid.n;
    while (this.yHat.length < count) {
      this.yHat.push(new Float64Array(len));
      this.nHat.push(new Float64Array(len));
      this.trial.push(new Float64Array(len));
      this.nTrial.push(new Float64Array(len));
    }
  }
}

/** the scheme definition: fixed steps through `create`, error-controlled steps through `embedded` */
export function etdPairScheme(table: EtdPairTable, name: string): SchemeDefinition {
  const embedded = (ctx: SchemeContext): EmbeddedStepScheme => {
    const cache = new EtdPairCache(ctx, table);
    return {
      attempt: (H, s, h, states) => etdPairAttempt(cache, H, s, h, states),
      accept: (states) => etdPairAccept(cache, states),
      reset: () => { cache.fsalS = Number.NaN; },
    };
  };
  return {
    name,
    order: table.order,
    doc: `${table.name} exponential Runge–Kutta pair, D exact in Fourier space (${table.source})`,
    create(ctx) {
      const e = embedded(ctx);
      return { step(H, s, h, states) { e.attempt(H, s, h, states); e.accept(states); } };
    },
    embedded: { order: table.embeddedOrder, create: embedded },
  };
}

export const ETD53_SCHEME = etdPairScheme(WHALEN_ETD53, 'etd53');
export const ETD43_SCHEME = etdPairScheme(KROGSTAD_ETD43, 'etd43');

/** H at the nodes of the step (node 0 kept when carried), lim = −D(s + h/2), the φ-coefficients for h */
function loadStep(c: EtdPairCache, H: DrivenHamiltonian, s: number, h: number, carried: boolean): void {
  for (let d = carried ? 1 : 0; d < c.nodes.length; d++) {
    H.terms(s + c.nodes[d] * h, c.raw);
    c.terms[d].load(c.raw);
  }
  const m = c.terms[c.mid].t;
  c.midRef.r1 = m.c1; c.midRef.r2 = m.c2; c.midRef.r3 = m.c3;
  const cr = c.coefficientRef;
  if (c.coefficients !== null && c.coefficients.h === h && cr.r1 === m.c1 && cr.r2 === m.c2 && cr.r3 === m.c3) return;
  const { kOdd } = c.grid;
  const { k2, k3 } = c.frhs;
  for (let j = 0; j < c.grid.n; j++) c.lim[j] = -(m.c1 * kOdd[j] + m.c2 * k2[j] + m.c3 * k3[j]);
  if (c.coefficients === null) c.coefficients = etdPairCoefficients(c.table, h, c.lim);
  else refillEtdPairCoefficients(c.coefficients, h, c.lim);
  cr.r1 = m.c1; cr.r2 = m.c2; cr.r3 = m.c3;
}

/** nv += −i(D_old − D_new) ŷ: the carried first stage re-referred to the new midpoint diagonal */
function rereference(c: EtdPairCache, y: Float64Array, nv: Float64Array): void {
  const a = c.carriedRef, b = c.midRef;
  const d1 = a.r1 - b.r1, d2 = a.r2 - b.r2, d3 = a.r3 - b.r3;
  if (d1 === 0 && d2 === 0 && d3 === 0) return;
  const { kOdd } = c.grid;
  const { k2, k3 } = c.frhs;
  for (let j = 0; j < c.grid.n; j++) {
    const m = d1 * kOdd[j] + d2 * k2[j] + d3 * k3[j];
    nv[2 * j] += m * y[2 * j + 1];
    nv[2 * j + 1] -= m * y[2 * j];
  }
}

/** the trial step s → s + h of every state; returns the largest relative orthogonal error estimate */
export function etdPairAttempt(c: EtdPairCache, H: DrivenHamiltonian, s: number, h: number, states: readonly Float64Array[]): number {
  const count = states.length;
  c.ensure(count);
  const carried = c.fsalS === s && c.fsalStates === states && c.fsalH === H;
  loadStep(c, H, s, h, carried);
  c.frhs.meanField = H.meanField ?? 0;
  const co = c.coefficients as EtdPairCoefficients;
  let worst = 0;
  for (let i = 0; i < count; i++) {
    if (!carried) {
      c.frhs.fft.forward(states[i], c.yHat[i]);
      c.rhs(c.yHat[i], c.nHat[i], 0);
    } else rereference(c, c.yHat[i], c.nHat[i]);
    etdPairStep(co, c.rhs, c.yHat[i], c.nHat[i], c.trial[i], c.nTrial[i], c.err, c.ws);
    worst = Math.max(worst, perpendicularNorm(c.err, c.trial[i]) / norm2(c.trial[i]));
  }
  // the first stages now refer to this step's midpoint and are kept for a retry from s
  c.carriedRef.r1 = c.midRef.r1; c.carriedRef.r2 = c.midRef.r2; c.carriedRef.r3 = c.midRef.r3;
  c.fsalS = s;
  c.fsalStates = states;
  c.fsalH = H;
  c.lastS = s;
  c.lastH = h;
  return worst;
}

/** states ← the last trial, each projected back to its norm; N(y₁) becomes the next first stage when N is linear
 *  (a mean-field N(f·y) ≠ f·N(y): the next step evaluates its first stage afresh) */
export function etdPairAccept(c: EtdPairCache, states: Float64Array[]): void {
  const len = 2 * c.grid.n;
  for (let i = 0; i < states.length; i++) {
    const f = norm2(c.yHat[i]) / norm2(c.trial[i]);
    const y = c.yHat[i], ny = c.nHat[i], t = c.trial[i], nt = c.nTrial[i];
    for (let j = 0; j < len; j++) {
      y[j] = f * t[j];
      ny[j] = f * nt[j];
    }
    c.frhs.fft.inverse(y, states[i]);
  }
  const last = c.nodes.length - 1;
  c.terms[0].copyFrom(c.terms[last]);
  c.carriedRef.r1 = c.midRef.r1; c.carriedRef.r2 = c.midRef.r2; c.carriedRef.r3 = c.midRef.r3;
  c.fsalS = c.frhs.meanField === 0 ? c.lastS + c.lastH : Number.NaN;
}
