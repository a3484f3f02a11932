/**
 * Embedded exponential Runge–Kutta pairs for y' = L y + N(y) with a diagonal, purely imaginary linear part
 * L = i·lim (dispersive Fourier problems), as data (tables) run by one step function, in the manner of scipy's
 * `integrate/_ivp/rk.py` (Butcher tables run by `rk_step`).
 *
 * A table with stages i = 0 … s−1 at nodes c_i and an FSAL stage s (N at the new point) defines
 *
 *     Y_i = e^{c_i hL} y + Σ_{j<i} a_ij N_j,          N_j = N(Y_j),   Y_0 = y
 *     y₁  = e^{hL} y + Σ_j b_j N_j,                    N_s = N(y₁)    (first stage of the next step)
 *     err = Σ_{j≤s} d_j N_j                            (difference of the embedded and the main solution)
 *
 * with every coefficient a φ-combination (Hochbruck & Ostermann, Acta Numerica 19, 209, 2010, eq. (2.10), (2.17)):
 *     a_ij = c_i h Σ_k α_ijk φ_k(c_i hL),   b_j = h Σ_k β_jk φ_k(hL),   d_j = h Σ_k δ_jk φ_k(hL),   k = 1, 2, 3,
 * the φ-functions from phi.ts (series / closed form at imaginary argument). The error estimate reuses the stages:
 * the FSAL evaluation N(y₁) is needed anyway as the next step's first stage and for the dense output's rate.
 *
 * All arrays are interleaved complex (re, im).
 */
import { phiImaginary, phiImaginaryFromExp, PHI_SERIES_BELOW } from './phi.ts';
import type { StageRhs } from './etdrk4.ts';

/** weights (of φ₁, φ₂, φ₃) of one coefficient; null: the coefficient is zero */
export type PhiWeights = readonly [number, number, number] | null;

export interface EtdPairTable {
  readonly name: string;
  /** the paper and equation the table is taken from */
  readonly source: string;
  /** order of the propagated solution */
  readonly order: number;
  /** order of the embedded solution: the estimate scales as h^(embeddedOrder + 1) */
  readonly embeddedOrder: number;
  /** c_i of the stages 0 … s−1 (c_0 = 0) */
  readonly nodes: readonly number[];
  /** a[i][j], j < i (a[0] is empty) */
  readonly a: readonly (readonly PhiWeights[])[];
  /** b[j], j = 0 … s−1 */
  readonly b: readonly PhiWeights[];
  /** d[j], j = 0 … s (the last is the FSAL stage N(y₁)) */
  readonly d: readonly PhiWeights[];
}

/**
 * Krogstad's fourth-order exponential Runge–Kutta method (Krogstad, J. Comput. Phys. 203, 72, 2005, eq. (13);
 * Hochbruck & Ostermann 2010, eq. (2.39)) with the third-order FSAL embedding of Whalen, Brio & Moloney
 * (J. Comput. Phys. 280, 579, 2015, §3, the ETD4(3) pair): the embedded solution replaces N(Y₃) by N(y₁) in the
 * last weight, so err = b₃ (N(y₁) − N(Y₃)) with b₃ = h(4φ₃ − φ₂).
 */
export const KROGSTAD_ETD43: EtdPairTable = Object.freeze<EtdPairTable>({
  name: 'ETD4(3) Krogstad',
  source: 'Krogstad, J. Comput. Phys. 203, 72 (2005), eq. (13); embedding: Whalen, Brio & Moloney, J. Comput. Phys. 280, 579 (2015), §3',
  order: 4,
  embeddedOrder: 3,
  nodes: [0, 0.5, 0.5, 1],
  a: [[], [[1, 0, 0]], [[1, -2, 0], [0, 2, 0]], [[1, -2, 0], null, [0, 2, 0]]],
  b: [[1, -3, 4], [0, 2, -4], [0, 2, -4], [0, -1, 4]],
  d: [null, null, null, [0, 1, -4], [0, -1, 4]],
});

/**
 * The fifth-order exponential Runge–Kutta method with third-order embedding of Whalen, Brio & Moloney (J. Comput.
 * Phys. 280, 579, 2015, §3, the ETD5(3) pair; nodes 0, ¼, ¼, ½, ¾, 1), written with φ_k = ψ_k/k!. The φ₂ weight of
 * b₂ is −467·2/1350, the value the order conditions Σ_j b_j c_j^(k−1)/(k−1)! = φ_k (Hochbruck & Ostermann 2010,
 * Table 2) require. The estimate is b₄ times the fourth difference −N₀ + 4N₂ − 6N₃ + 4N₄ − N₅ of the stage
 * values at ¼, ½, ¾, 1; N(y₁) is the next step's first stage.
 */
export const WHALEN_ETD53: EtdPairTable = Object.freeze<EtdPairTable>({
  name: 'ETD5(3)',
  source: 'Whalen, Brio & Moloney, J. Comput. Phys. 280, 579 (2015), §3',
  order: 5,
  embeddedOrder: 3,
  nodes: [0, 0.25, 0.25, 0.5, 0.75, 1],
  a: [
    [],
    [[1, 0, 0]],
    [[1, -1, 0], [0, 1, 0]],
    [[1, -2, 0], null, [0, 2, 0]],
    [[1, -1.5, 0], [-0.5, 0, 0], [0.5, 0, 0], [0, 1.5, 0]],
    [[-77 / 42, 118 / 42, 0], [8 / 7, 0, 0], [111 / 28, -174 / 28, 0], [-12 / 7, 0, 0], [-47 / 84, 286 / 84, 0]],
  ],
  b: [
    [1799 / 2700, -6958 / 2700, 11340 / 2700],
    null,
    [1097 / 1350, -934 / 1350, -900 / 1350],
    [-98 / 225, 796 / 225, -1620 / 225],
    [-313 / 1350, 1766 / 1350, -540 / 1350],
    [509 / 2700, -4258 / 2700, 10980 / 2700],
  ],
  d: [
    [313 / 1350, -1766 / 1350, 540 / 1350],
    null,
    [-4 * 313 / 1350, 4 * 1766 / 1350, -4 * 540 / 1350],
    [6 * 313 / 1350, -6 * 1766 / 1350, 6 * 540 / 1350],
    [-4 * 313 / 1350, 4 * 1766 / 1350, -4 * 540 / 1350],
    [313 / 1350, -1766 / 1350, 540 / 1350],
    null,
  ],
});

interface Term {
  readonly from: number;
  readonly coef: Float64Array;
}

/** the coefficients of a table for one step size h: exponentials and φ-combinations per mode */
export interface EtdPairCoefficients {
  h: number;
  readonly table: EtdPairTable;
  /** e^{c_i hL} per stage (index 0 unused) */
  readonly stageExp: readonly Float64Array[];
  readonly stageTerms: readonly (readonly Term[])[];
  /** e^{hL} */
  readonly exp: Float64Array;
  readonly resultTerms: readonly Term[];
  readonly errorTerms: readonly Term[];
  /** what `refillEtdPairCoefficients` recomputes: per distinct node its exponential and φ-values, per combination
   *  its node, its scale in units of h and its weights */
  readonly nodes: readonly NodeValues[];
  readonly combos: readonly { phi: Float64Array; factor: number; w: readonly [number, number, number]; out: Float64Array }[];
  /** all nodes are multiples of this unit (1/8 or coarser; NaN when one is not), so every e^{i c h lim} is a power of
   *  one exponential per mode */
  readonly unit: number;
  /** powers e^{i k·unit·h·lim}, k = 1 … max multiple, of one mode (re, im) */
  readonly powers: Float64Array;
}

/** one distinct node c: its multiple of the unit (0 when there is no unit), e^{i c h lim} and φ₁,₂,₃ per mode */
interface NodeValues {
  readonly c: number;
  readonly multiple: number;
  readonly exp: Float64Array;
  readonly phi: Float64Array;
}

/**
 * Coefficients of `table` for step h and L_j = i·lim[j]: per distinct node scale c, φ₁,₂,₃(i c h lim[j]) and
 * e^{i c h lim[j]}; equal φ-combinations share one array.
 */
export function etdPairCoefficients(table: EtdPairTable, h: number, lim: Float64Array): EtdPairCoefficients {
  const m = lim.length;
  const nodeValues = new Map<number, { exp: Float64Array; phi: Float64Array }>();
  const node = (c: number) => {
    let p = nodeValues.get(c);
    if (!p) {
      p = { exp: new Float64Array(2 * m), phi: new Float64Array(6 * m) };
      nodeValues.set(c, p);
    }
    return p;
  };
  const byKey = new Map<string, Float64Array>();
  const combos: { phi: Float64Array; factor: number; w: readonly [number, number, number]; out: Float64Array }[] = [];
  const combo = (c: number, factor: number, w: readonly [number, number, number]): Float64Array => {
    const key = `${c}:${factor}:${w.join(',')}`;
    let out = byKey.get(key);
    if (!out) {
      out = new Float64Array(2 * m);
      byKey.set(key, out);
      combos.push({ phi: node(c).phi, factor, w, out });
    }
    return out;
  };
  const terms = (ws: readonly PhiWeights[], c: number, factor: number): Term[] =>
    ws.flatMap((w, from) => (w ? [{ from, coef: combo(c, factor, w) }] : []));
  const stageExp = table.nodes.map((c, i) => (i === 0 ? new Float64Array(0) : node(c).exp));
  const stageTerms = table.a.map((row, i) => terms(row, table.nodes[i], table.nodes[i]));
  const co: EtdPairCoefficients = { h, table, stageExp, stageTerms, exp: node(1).exp, resultTerms: terms(table.b, 1, 1), errorTerms: terms(table.d, 1, 1), ...nodeMultiples(nodeValues), combos };
  refillEtdPairCoefficients(co, h, lim);
  return co;
}

/** the largest denominator of a node that is written as a power of one exponential (common practice: the nodes of
 *  the tables here are quarters and halves) */
const MAX_NODE_DENOMINATOR = 8;

function nodeMultiples(values: ReadonlyMap<number, { exp: Float64Array; phi: Float64Array }>): { nodes: NodeValues[]; unit: number; powers: Float64Array } {
  const unit = 1 / MAX_NODE_DENOMINATOR;
  const ks = [...values.keys()].map((c) => Math.round(c / unit));
  const whole = [...values.keys()].every((c, i) => ks[i] >= 1 && Math.abs(ks[i] * unit - c) <= 1e-15);
  const nodes = [...values].map(([c, v], i) => ({ c, multiple: whole ? ks[i] : 0, ...v }));
  return { nodes, unit: whole ? unit : Number.NaN, powers: new Float64Array(whole ? 2 * (Math.max(...ks) + 1) : 0) };
}

/** the coefficients of `co` recomputed in place for step h and L = i·lim (allocates nothing); with node multiples,
 *  one cos/sin per mode gives every node's exponential by repeated multiplication (a few ulp) and the closed-form
 *  φ-functions reuse it (phi.ts phiImaginaryFromExp) */
export function refillEtdPairCoefficients(co: EtdPairCoefficients, h: number, lim: Float64Array): void {
  const m = lim.length;
  co.h = h;
  const nodes = co.nodes;
  const pw = co.powers;
  const top = pw.length / 2 - 1;
  for (let j = 0; j < m; j++) {
    if (top > 0) {
      const base = co.unit * h * lim[j];
      const br = Math.cos(base), bi = Math.sin(base);
      pw[2] = br; pw[3] = bi;
      for (let k = 2; k <= top; k++) {
        const pr = pw[2 * k - 2], pi = pw[2 * k - 1];
        pw[2 * k] = pr * br - pi * bi;
        pw[2 * k + 1] = pr * bi + pi * br;
      }
    }
    for (let q = 0; q < nodes.length; q++) {
      const { c, multiple, exp, phi } = nodes[q];
      const th = c * h * lim[j];
      const er = multiple > 0 ? pw[2 * multiple] : Math.cos(th);
      const ei = multiple > 0 ? pw[2 * multiple + 1] : Math.sin(th);
      exp[2 * j] = er;
      exp[2 * j + 1] = ei;
      if (Math.abs(th) < PHI_SERIES_BELOW) phiImaginary(th, phi, 6 * j);
      else phiImaginaryFromExp(th, er, ei, phi, 6 * j);
    }
  }
  for (const { phi, factor, w, out } of co.combos) {
    const scale = factor * h;
    for (let j = 0; j < m; j++) {
      let re = 0, im = 0;
      for (let k = 0; k < 3; k++) {
        re += scale * w[k] * phi[6 * j + 2 * k];
        im += scale * w[k] * phi[6 * j + 2 * k + 1];
      }
      out[2 * j] = re;
      out[2 * j + 1] = im;
    }
  }
}

/** scratch of one integration: a stage value, N of every stage, and the stage table the step reads (N₀ and the FSAL
 *  stage are the caller's arrays) */
export interface EtdPairWorkspace {
  readonly y: Float64Array;
  readonly n: Float64Array[];
  readonly refs: Float64Array[];
}

export function etdPairWorkspace(table: EtdPairTable, m: number): EtdPairWorkspace {
  const n = table.nodes.map(() => new Float64Array(2 * m));
  return { y: new Float64Array(2 * m), n, refs: [...n, new Float64Array(0)] };
}

/* Kernels of the step (complex, interleaved, first n2 doubles): each pass reads every operand once and writes out
 * once; the step runs a combination in passes of one or two terms. */

/** out = e ⊙ v */
function scale(e: Float64Array, v: Float64Array, out: Float64Array, n2: number): void {
  for (let i = 0; i < n2; i += 2) {
    const er = e[i], ei = e[i + 1], vr = v[i], vi = v[i + 1];
    out[i] = er * vr - ei * vi;
    out[i + 1] = er * vi + ei * vr;
  }
}

/** out = e ⊙ v + a ⊙ f */
function start1(e: Float64Array, v: Float64Array, a: Float64Array, f: Float64Array, out: Float64Array, n2: number): void {
  for (let i = 0; i < n2; i += 2) {
    const er = e[i], ei = e[i + 1], vr = v[i], vi = v[i + 1], ar = a[i], ai = a[i + 1], fr = f[i], fi = f[i + 1];
    out[i] = er * vr - ei * vi + ar * fr - ai * fi;
    out[i + 1] = er * vi + ei * vr + ar * fi + ai * fr;
  }
}

/** out = e ⊙ v + a ⊙ f + b ⊙ g */
function start2(e: Float64Array, v: Float64Array, a: Float64Array, f: Float64Array, b: Float64Array, g: Float64Array, out: Float64Array, n2: number): void {
  for (let i = 0; i < n2; i += 2) {
    const er = e[i], ei = e[i + 1], vr = v[i], vi = v[i + 1], ar = a[i], ai = a[i + 1], fr = f[i], fi = f[i + 1];
    const br = b[i], bi = b[i + 1], gr = g[i], gi = g[i + 1];
    out[i] = er * vr - ei * vi + ar * fr - ai * fi + br * gr - bi * gi;
    out[i + 1] = er * vi + ei * vr + ar * fi + ai * fr + br * gi + bi * gr;
  }
}

/** out += a ⊙ f */
function add1(a: Float64Array, f: Float64Array, out: Float64Array, n2: number): void {
  for (let i = 0; i < n2; i += 2) {
    const ar = a[i], ai = a[i + 1], fr = f[i], fi = f[i + 1];
    out[i] += ar * fr - ai * fi;
    out[i + 1] += ar * fi + ai * fr;
  }
}

/** out += a ⊙ f + b ⊙ g */
function add2(a: Float64Array, f: Float64Array, b: Float64Array, g: Float64Array, out: Float64Array, n2: number): void {
  for (let i = 0; i < n2; i += 2) {
    const ar = a[i], ai = a[i + 1], fr = f[i], fi = f[i + 1], br = b[i], bi = b[i + 1], gr = g[i], gi = g[i + 1];
    out[i] += ar * fr - ai * fi + br * gr - bi * gi;
    out[i + 1] += ar * fi + ai * fr + br * gi + bi * gr;
  }
}

/** out = e ⊙ v + Σ terms (coef ⊙ N_from), or without e: out = Σ terms; N_j = refs[j] */
function combine(terms: readonly Term[], refs: readonly Float64Array[], e: Float64Array | null, v: Float64Array, out: Float64Array, n2: number): void {
  let t = 0;
  if (!e) out.fill(0, 0, n2);
  else if (terms.length === 0) scale(e, v, out, n2);
  else if (terms.length === 1) {
    start1(e, v, terms[0].coef, refs[terms[0].from], out, n2);
    t = 1;
  } else {
    start2(e, v, terms[0].coef, refs[terms[0].from], terms[1].coef, refs[terms[1].from], out, n2);
    t = 2;
  }
  for (; t + 1 < terms.length; t += 2) add2(terms[t].coef, refs[terms[t].from], terms[t + 1].coef, refs[terms[t + 1].from], out, n2);
  if (t < terms.length) add1(terms[t].coef, refs[terms[t].from], out, n2);
}

/**
 * One step of an embedded pair (module comment): out = y₁ from v = y and nv = N(y); nOut = N(y₁) (the FSAL stage,
 * evaluated as stage index s); err = the embedded minus the propagated solution. Only the first `active` modes are
 * stepped (the rest stay as the caller left them, e.g. zero beyond a dealiasing cut). Allocates nothing; v and nv
 * are read only; out, nOut and err must be distinct from v, nv and the workspace.
 */
export function etdPairStep(
  co: EtdPairCoefficients, rhs: StageRhs, v: Float64Array, nv: Float64Array,
  out: Float64Array, nOut: Float64Array, err: Float64Array, ws: EtdPairWorkspace, active = v.length / 2,
): void {
  const n2 = 2 * active;
  const s = co.table.nodes.length;
  const refs = ws.refs;
  refs[0] = nv;
  refs[s] = nOut;
  for (let i = 1; i < s; i++) {
    combine(co.stageTerms[i], refs, co.stageExp[i], v, ws.y, n2);
    rhs(ws.y, refs[i], i);
  }
  combine(co.resultTerms, refs, co.exp, v, out, n2);
  rhs(out, nOut, s);
  combine(co.errorTerms, refs, null, v, err, n2);
}
