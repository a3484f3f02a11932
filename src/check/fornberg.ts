/** frames in the λ-stencil: fourth order on uniform frames, while five frames still fit short sequences */
export const STENCIL_WIDTH = 5;

/**
 * Finite-difference weights on arbitrary (non-uniform) nodes: B. Fornberg, "Generation of finite difference
 * formulas on arbitrarily spaced grids", Math. Comp. 51, 699–706 (1988), the recursion of its §3 (in the
 * compact form of Fornberg, SIAM Rev. 40, 685, 1998). For nodes x_0 … x_{n−1} and evaluation point z,
 * f^{(d)}(z) ≈ Σ_i w[d][i] f(x_i) for every d ≤ maxOrder, exact for polynomials of degree < n.
 * Used for u_λ where no flow fit supplies the rate (frames of failing intervals, check/rates.ts) and for the
 * Hermite interpolant of check/drive.ts.
 */
export function fornbergWeights(z: number, nodes: readonly number[], maxOrder: number): number[][] {
  const n = nodes.length;
  if (n < maxOrder + 1) throw new RangeError(`a derivative of order ${maxOrder} needs at least ${maxOrder + 1} nodes, got ${n}`);
  const c: number[][] = Array.from({ length: maxOrder + 1 }, () => new Array<number>(n).fill(0));
  let c1 = 1;
  let c4 = nodes[0] - z;
  c[0][0] = 1;
  for (let i = 1; i < n; i++) {
    const mn = Math.min(i, maxOrder);
    let c2 = 1;
    const c5 = c4;
    c4 = nodes[i] - z;
    for (let j = 0; j < i; j++) {
      const c3 = nodes[i] - nodes[j];
      c2 *= c3;
      if (j === i - 1) {
        for (let k = mn; k >= 1; k--) c[k][i] = (c1 * (k * c[k - 1][i - 1] - c5 * c[k][i - 1])) / c2;
        c[0][i] = (-c1 * c5 * c[0][i - 1]) / c2;
      }
      for (let k = mn; k >= 1; k--) c[k][j] = (c4 * c[k][j] - k * c[k - 1][j]) / c3;
      c[0][j] = (c4 * c[0][j]) / c3;
    }
    c1 = c2;
  }
  return c;
}

/**
 * The stencil of `width` consecutive frames for frame k of `count`: centred where possible, shifted to one
 * side at the ends (so every stencil has the same width and hence the same order).
 */
export function stencilFor(k: number, count: number, width: number): { start: number; end: number } {
  const w = Math.min(width, count);
  let start = k - Math.floor(w / 2);
  start = Math.max(0, Math.min(start, count - w));
  return { start, end: start + w };
}

/** u_λ at every frame from `width`-point Fornberg stencils (pure: frames in, new arrays out) */
export function lambdaDerivatives(lambda: readonly number[], frames: readonly Float64Array[], width: number): { rates: Float64Array[]; stencils: [number, number][] } {
  const count = frames.length;
  const n = frames[0].length;
  const rates: Float64Array[] = [];
  const stencils: [number, number][] = [];
  for (let k = 0; k < count; k++) {
    const { start, end } = stencilFor(k, count, width);
    const w = fornbergWeights(lambda[k], lambda.slice(start, end), 1)[1];
    const r = new Float64Array(n);
    for (let i = start; i < end; i++) {
      const wi = w[i - start];
      const f = frames[i];
      for (let j = 0; j < n; j++) r[j] += wi * f[j];
    }
    rates.push(r);
    stencils.push([start, end]);
  }
  return { rates, stencils };
}
