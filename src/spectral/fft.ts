/**
 * Fast Fourier transforms.
 *
 * RealFFT (our own): the half spectrum X_k, k = 0 … N/2, of a real signal of length N = 2M from one complex
 * transform of length M of the packed signal z_j = x_{2j} + i x_{2j+1} and the split step
 *     X_k = F_k + e^{−2πik/N} G_k,   F_k = (Z_k + Z̄_{M−k})/2,   G_k = (Z_k − Z̄_{M−k})/(2i)
 * (forward; the inverse builds Z_k = F_k + iG_k from X and unpacks), the classic real-input algorithm of
 * Cooley, Lewis & Welch, J. Sound Vib. 12, 315 (1970); Press et al., Numerical Recipes, 3rd ed. 2007, §12.3.
 * The complex transform is a Stockham autosort FFT (no bit reversal; Van Loan, Computational Frameworks for the
 * FFT, SIAM 1992, §1.7) of radix 8 and 4, its last stage (length 2, 4 or 8) without twiddles, on split real/imaginary
 * arrays with every twiddle factor precomputed from cos/sin directly (no recurrence). The inverse runs the same forward
 * transform on the conjugated input (IDFT(Z) = conj DFT(conj Z)/M).
 * ComplexFFT: fft.js (radix-4, interleaved re/im).
 *
 * Conventions: forward X_k = Σ_j x_j e^{−2πijk/N} (unnormalised); inverse carries the 1/N. The inverse reads the
 * Hermitian half spectrum and ignores the imaginary parts of X_0 and X_{N/2} (those of a real signal are zero).
 * Every buffer is allocated once in the constructor: forward/inverse allocate nothing.
 */
import FFT from 'fft.js';

export class ComplexFFT {
  readonly n: number;
  private readonly fft: FFT;
  constructor(n: number) {
    this.n = n;
    this.fft = new FFT(n);
  }
  /** out = DFT(inp); both interleaved, length 2N, distinct buffers */
  forward(inp: Float64Array, out: Float64Array): void {
    this.fft.transform(out, inp);
  }
  /** out = IDFT(inp) including the 1/N */
  inverse(inp: Float64Array, out: Float64Array): void {
    this.fft.inverseTransform(out, inp);
  }
}

/** a butterfly stage of radix 4 or 8 with twiddles (n, s: sub-transform length and stride; tw: cos, sin of
 *  e^{−2πi pr/n}, r = 1 … radix − 1, per p) */
interface TwiddledStage {
  readonly radix: 4 | 8;
  readonly n: number;
  readonly s: number;
  readonly tw: Float64Array;
}

/**
 * One radix-4 Stockham stage of a forward transform: sub-transforms of length n at stride s read from x, their
 * four quarter butterflies (twiddled by e^{−2πi pr/n}, r = 1, 2, 3) written to y in autosort order.
 */
function radix4Stage(n: number, s: number, xr: Float64Array, xi: Float64Array, yr: Float64Array, yi: Float64Array, tw: Float64Array): void {
  const m = n >> 2;
  const sm = s * m;
  for (let p = 0; p < m; p++) {
    const w1r = tw[6 * p], w1i = tw[6 * p + 1], w2r = tw[6 * p + 2], w2i = tw[6 * p + 3], w3r = tw[6 * p + 4], w3i = tw[6 * p + 5];
    const ib = s * p;
    const ob = 4 * s * p;
    for (let q = 0; q < s; q++) {
      const i0 = ib + q, i1 = i0 + sm, i2 = i1 + sm, i3 = i2 + sm;
      const ar = xr[i0], ai = xi[i0], br = xr[i1], bi = xi[i1], cr = xr[i2], ci = xi[i2], dr = xr[i3], di = xi[i3];
      const apcr = ar + cr, apci = ai + ci, amcr = ar - cr, amci = ai - ci;
      const bpdr = br + dr, bpdi = bi + di, bmdr = br - dr, bmdi = bi - di;
      // quarter-turn products: W₄ = −i, so X₁ = (a − c) − i(b − d), X₃ = (a − c) + i(b − d)
      const t1r = amcr + bmdi, t1i = amci - bmdr;
      const t2r = apcr - bpdr, t2i = apci - bpdi;
      const t3r = amcr - bmdi, t3i = amci + bmdr;
      const o0 = ob + q, o1 = o0 + s, o2 = o1 + s, o3 = o2 + s;
      yr[o0] = apcr + bpdr;
      yi[o0] = apci + bpdi;
      yr[o1] = w1r * t1r - w1i * t1i;
      yi[o1] = w1r * t1i + w1i * t1r;
      yr[o2] = w2r * t2r - w2i * t2i;
      yi[o2] = w2r * t2i + w2i * t2r;
      yr[o3] = w3r * t3r - w3i * t3i;
      yi[o3] = w3r * t3i + w3i * t3r;
    }
  }
}

/**
 * One radix-8 Stockham stage: as radix4Stage with eight outputs per butterfly, the 8-point DFT taken as two 4-point
 * DFTs (even and odd inputs) combined with W₈ʳ, then twiddled by e^{−2πi pr/n}, r = 1 … 7.
 */
function radix8Stage(n: number, s: number, xr: Float64Array, xi: Float64Array, yr: Float64Array, yi: Float64Array, tw: Float64Array): void {
  const m = n >> 3;
  const sm = s * m;
  const h = Math.SQRT1_2;
  for (let p = 0; p < m; p++) {
    const t = 14 * p;
    const w1r = tw[t], w1i = tw[t + 1], w2r = tw[t + 2], w2i = tw[t + 3], w3r = tw[t + 4], w3i = tw[t + 5], w4r = tw[t + 6], w4i = tw[t + 7];
    const w5r = tw[t + 8], w5i = tw[t + 9], w6r = tw[t + 10], w6i = tw[t + 11], w7r = tw[t + 12], w7i = tw[t + 13];
    const ib = s * p;
    const ob = 8 * s * p;
    for (let q = 0; q < s; q++) {
      const j0 = ib + q, j1 = j0 + sm, j2 = j1 + sm, j3 = j2 + sm, j4 = j3 + sm, j5 = j4 + sm, j6 = j5 + sm, j7 = j6 + sm;
      let ar = xr[j0], ai = xi[j0], br = xr[j2], bi = xi[j2], cr = xr[j4], ci = xi[j4], dr = xr[j6], di = xi[j6];
      let apcr = ar + cr, apci = ai + ci, amcr = ar - cr, amci = ai - ci;
      let bpdr = br + dr, bpdi = bi + di, bmdr = br - dr, bmdi = bi - di;
      const e0r = apcr + bpdr, e0i = apci + bpdi, e1r = amcr + bmdi, e1i = amci - bmdr;
      const e2r = apcr - bpdr, e2i = apci - bpdi, e3r = amcr - bmdi, e3i = amci + bmdr;
      ar = xr[j1]; ai = xi[j1]; br = xr[j3]; bi = xi[j3]; cr = xr[j5]; ci = xi[j5]; dr = xr[j7]; di = xi[j7];
      apcr = ar + cr; apci = ai + ci; amcr = ar - cr; amci = ai - ci;
      bpdr = br + dr; bpdi = bi + di; bmdr = br - dr; bmdi = bi - di;
      const o0r = apcr + bpdr, o0i = apci + bpdi, o1r = amcr + bmdi, o1i = amci - bmdr;
      const o2r = apcr - bpdr, o2i = apci - bpdi, o3r = amcr - bmdi, o3i = amci + bmdr;
      const t1r = h * (o1r + o1i), t1i = h * (o1i - o1r);
      const t3r = h * (o3i - o3r), t3i = -h * (o3r + o3i);
      const o = ob + q;
      yr[o] = e0r + o0r;
      yi[o] = e0i + o0i;
      let zr = e0r - o0r, zi = e0i - o0i;
      yr[o + 4 * s] = w4r * zr - w4i * zi;
      yi[o + 4 * s] = w4r * zi + w4i * zr;
      zr = e1r + t1r; zi = e1i + t1i;
      yr[o + s] = w1r * zr - w1i * zi;
      yi[o + s] = w1r * zi + w1i * zr;
      zr = e1r - t1r; zi = e1i - t1i;
      yr[o + 5 * s] = w5r * zr - w5i * zi;
      yi[o + 5 * s] = w5r * zi + w5i * zr;
      zr = e2r + o2i; zi = e2i - o2r;
      yr[o + 2 * s] = w2r * zr - w2i * zi;
      yi[o + 2 * s] = w2r * zi + w2i * zr;
      zr = e2r - o2i; zi = e2i + o2r;
      yr[o + 6 * s] = w6r * zr - w6i * zi;
      yi[o + 6 * s] = w6r * zi + w6i * zr;
      zr = e3r + t3r; zi = e3i + t3i;
      yr[o + 3 * s] = w3r * zr - w3i * zi;
      yi[o + 3 * s] = w3r * zi + w3i * zr;
      zr = e3r - t3r; zi = e3i - t3i;
      yr[o + 7 * s] = w7r * zr - w7i * zi;
      yi[o + 7 * s] = w7r * zi + w7i * zr;
    }
  }
}

/** the last stage of length 2 at stride s (no twiddles) */
function radix2Last(s: number, xr: Float64Array, xi: Float64Array, yr: Float64Array, yi: Float64Array): void {
  for (let q = 0; q < s; q++) {
    const ar = xr[q], ai = xi[q], br = xr[q + s], bi = xi[q + s];
    yr[q] = ar + br;
    yi[q] = ai + bi;
    yr[q + s] = ar - br;
    yi[q + s] = ai - bi;
  }
}

/** the last stage of length 4 at stride s (no twiddles) */
function radix4Last(s: number, xr: Float64Array, xi: Float64Array, yr: Float64Array, yi: Float64Array): void {
  for (let q = 0; q < s; q++) {
    const i1 = q + s, i2 = i1 + s, i3 = i2 + s;
    const ar = xr[q], ai = xi[q], br = xr[i1], bi = xi[i1], cr = xr[i2], ci = xi[i2], dr = xr[i3], di = xi[i3];
    const apcr = ar + cr, apci = ai + ci, amcr = ar - cr, amci = ai - ci;
    const bpdr = br + dr, bpdi = bi + di, bmdr = br - dr, bmdi = bi - di;
    yr[q] = apcr + bpdr;
    yi[q] = apci + bpdi;
    yr[i1] = amcr + bmdi;
    yi[i1] = amci - bmdr;
    yr[i2] = apcr - bpdr;
    yi[i2] = apci - bpdi;
    yr[i3] = amcr - bmdi;
    yi[i3] = amci + bmdr;
  }
}

/**
 * The last stage of length 8 at stride s (no twiddles): two 4-point DFTs of the even and odd inputs combined with
 * W₈ʳ = e^{−iπr/4}, r = 0 … 3 (radix-2 split of the 8-point DFT).
 */
function radix8Last(s: number, xr: Float64Array, xi: Float64Array, yr: Float64Array, yi: Float64Array): void {
  const h = Math.SQRT1_2;
  for (let q = 0; q < s; q++) {
    const i1 = q + s, i2 = i1 + s, i3 = i2 + s, i4 = i3 + s, i5 = i4 + s, i6 = i5 + s, i7 = i6 + s;
    let ar = xr[q], ai = xi[q], br = xr[i2], bi = xi[i2], cr = xr[i4], ci = xi[i4], dr = xr[i6], di = xi[i6];
    let apcr = ar + cr, apci = ai + ci, amcr = ar - cr, amci = ai - ci;
    let bpdr = br + dr, bpdi = bi + di, bmdr = br - dr, bmdi = bi - di;
    const e0r = apcr + bpdr, e0i = apci + bpdi, e1r = amcr + bmdi, e1i = amci - bmdr;
    const e2r = apcr - bpdr, e2i = apci - bpdi, e3r = amcr - bmdi, e3i = amci + bmdr;
    ar = xr[i1]; ai = xi[i1]; br = xr[i3]; bi = xi[i3]; cr = xr[i5]; ci = xi[i5]; dr = xr[i7]; di = xi[i7];
    apcr = ar + cr; apci = ai + ci; amcr = ar - cr; amci = ai - ci;
    bpdr = br + dr; bpdi = bi + di; bmdr = br - dr; bmdi = bi - di;
    const o0r = apcr + bpdr, o0i = apci + bpdi, o1r = amcr + bmdi, o1i = amci - bmdr;
    const o2r = apcr - bpdr, o2i = apci - bpdi, o3r = amcr - bmdi, o3i = amci + bmdr;
    // W₈ = (1 − i)/√2, W₈² = −i, W₈³ = −(1 + i)/√2 times the odd half
    const t1r = h * (o1r + o1i), t1i = h * (o1i - o1r);
    const t3r = h * (o3i - o3r), t3i = -h * (o3r + o3i);
    yr[q] = e0r + o0r;
    yi[q] = e0i + o0i;
    yr[i4] = e0r - o0r;
    yi[i4] = e0i - o0i;
    yr[i1] = e1r + t1r;
    yi[i1] = e1i + t1i;
    yr[i5] = e1r - t1r;
    yi[i5] = e1i - t1i;
    yr[i2] = e2r + o2i;
    yi[i2] = e2i - o2r;
    yr[i6] = e2r - o2i;
    yi[i6] = e2i + o2r;
    yr[i3] = e3r + t3r;
    yi[i3] = e3i + t3i;
    yr[i7] = e3r - t3r;
    yi[i7] = e3i - t3i;
  }
}

/**
 * Forward complex DFT of length M (a power of two ≥ 2), Stockham (module comment): stages of radix 8 and 4 with
 * twiddles down to a last stage of length 2, 4 or 8 without them. The input goes into (inRe, inIm), the result appears in
 * (outRe, outIm), which are fixed for the size; the input is overwritten.
 */
class StockhamFFT {
  readonly inRe: Float64Array;
  readonly inIm: Float64Array;
  readonly outRe: Float64Array;
  readonly outIm: Float64Array;
  private readonly bufRe: readonly [Float64Array, Float64Array];
  private readonly bufIm: readonly [Float64Array, Float64Array];
  private readonly stages: readonly TwiddledStage[];
  /** length of the last (twiddle-free) stage: 2, 4 or 8 */
  private readonly last: number;
  private readonly lastStride: number;

  constructor(m: number) {
    this.bufRe = [new Float64Array(m), new Float64Array(m)];
    this.bufIm = [new Float64Array(m), new Float64Array(m)];
    const log = Math.round(Math.log2(m));
    this.last = m === 2 ? 2 : log === 2 || log === 4 ? 4 : 8;
    // the twiddled stages: as many of radix 8 as leave a multiple of 2 bits for radix 4 (fewer passes over the data)
    const rest = log - Math.log2(this.last);
    let eights = Math.floor(rest / 3);
    if (rest - 3 * eights === 1) eights--;
    const stages: TwiddledStage[] = [];
    let n = m;
    let s = 1;
    while (n > this.last) {
      const radix = eights > 0 ? 8 : 4;
      if (radix === 8) eights--;
      const q = n / radix;
      const tw = new Float64Array(2 * (radix - 1) * q);
      for (let p = 0; p < q; p++) {
        for (let r = 1; r < radix; r++) {
          const th = (-2 * Math.PI * p * r) / n;
          tw[2 * (radix - 1) * p + 2 * (r - 1)] = Math.cos(th);
          tw[2 * (radix - 1) * p + 2 * (r - 1) + 1] = Math.sin(th);
        }
      }
      stages.push({ radix, n, s, tw });
      n /= radix;
      s *= radix;
    }
    this.stages = stages;
    this.lastStride = s;
    const count = stages.length + 1;
    this.inRe = this.bufRe[0];
    this.inIm = this.bufIm[0];
    this.outRe = this.bufRe[count % 2];
    this.outIm = this.bufIm[count % 2];
  }

  run(): void {
    const re = this.bufRe;
    const im = this.bufIm;
    let from = 0;
    for (const { radix, n, s, tw } of this.stages) {
      if (radix === 8) radix8Stage(n, s, re[from], im[from], re[1 - from], im[1 - from], tw);
      else radix4Stage(n, s, re[from], im[from], re[1 - from], im[1 - from], tw);
      from = 1 - from;
    }
    const s = this.lastStride;
    if (this.last === 8) radix8Last(s, re[from], im[from], re[1 - from], im[1 - from]);
    else if (this.last === 4) radix4Last(s, re[from], im[from], re[1 - from], im[1 - from]);
    else radix2Last(s, re[from], im[from], re[1 - from], im[1 - from]);
  }
}

export class RealFFT {
  readonly n: number;
  private readonly half: number;
  private readonly core: StockhamFFT;
  /** cos and sin of 2πk/N, k = 0 … N/2 (the split step's twiddles) */
  private readonly cos: Float64Array;
  private readonly sin: Float64Array;

  constructor(n: number) {
    if (n < 4 || (n & (n - 1)) !== 0) throw new RangeError(`RealFFT size must be a power of two ≥ 4, got ${n}`);
    this.n = n;
    this.half = n / 2;
    this.core = new StockhamFFT(this.half);
    this.cos = new Float64Array(this.half + 1);
    this.sin = new Float64Array(this.half + 1);
    for (let k = 0; k <= this.half; k++) {
      this.cos[k] = Math.cos((2 * Math.PI * k) / n);
      this.sin[k] = Math.sin((2 * Math.PI * k) / n);
    }
  }

  /** spec (interleaved, length N+2: modes 0 … N/2) = DFT of the real signal x (length N) */
  forward(x: Float64Array, spec: Float64Array): void {
    const m = this.half;
    const ar = this.core.inRe, ai = this.core.inIm;
    for (let j = 0; j < m; j++) {
      ar[j] = x[2 * j];
      ai[j] = x[2 * j + 1];
    }
    this.core.run();
    this.split(spec);
  }

  /** x (length N) = inverse DFT of the Hermitian half spectrum spec (length N+2); spec is not modified */
  inverse(spec: Float64Array, x: Float64Array): void {
    const m = this.half;
    this.join(spec);
    this.core.run();
    const zr = this.core.outRe, zi = this.core.outIm;
    const inv = 1 / m;
    for (let j = 0; j < m; j++) {
      x[2 * j] = zr[j] * inv;
      x[2 * j + 1] = -zi[j] * inv;
    }
  }

  /**
   * out (length N+2) = DFT of u², u = inverse DFT of the half spectrum spec: the two transforms of a quadratic
   * pseudo-spectral product, squaring the packed samples in place (no physical array is written). spec is not
   * modified; out may be spec.
   */
  squareOf(spec: Float64Array, out: Float64Array): void {
    const m = this.half;
    this.join(spec);
    this.core.run();
    const zr = this.core.outRe, zi = this.core.outIm, ar = this.core.inRe, ai = this.core.inIm;
    const inv = 1 / m;
    // u_{2j} = Re z_j / M, u_{2j+1} = −Im z_j / M, packed again as u²_{2j} + i u²_{2j+1}
    for (let j = 0; j < m; j++) {
      const a = zr[j] * inv, b = zi[j] * inv;
      ar[j] = a * a;
      ai[j] = b * b;
    }
    this.core.run();
    this.split(out);
  }

  /** the forward split step: X_k, k = 0 … M, from the core's output Z (module comment) */
  private split(spec: Float64Array): void {
    const m = this.half;
    const zr = this.core.outRe, zi = this.core.outIm, c = this.cos, sn = this.sin;
    spec[0] = zr[0] + zi[0];
    spec[1] = 0;
    spec[2 * m] = zr[0] - zi[0];
    spec[2 * m + 1] = 0;
    // k and M − k together: F_{M−k} = F̄_k, G_{M−k} = Ḡ_k and e^{−2πi(M−k)/N} = −e^{2πik/N}, so X_{M−k} = conj(F_k − W^k G_k)
    for (let k = 1, l = m - 1; k < l; k++, l--) {
      const kr = zr[k], ki = zi[k], lr = zr[l], li = zi[l];
      const fr = 0.5 * (kr + lr), fi = 0.5 * (ki - li);
      const gr = 0.5 * (ki + li), gi = -0.5 * (kr - lr);
      const wgr = c[k] * gr + sn[k] * gi, wgi = c[k] * gi - sn[k] * gr;
      spec[2 * k] = fr + wgr;
      spec[2 * k + 1] = fi + wgi;
      spec[2 * l] = fr - wgr;
      spec[2 * l + 1] = wgi - fi;
    }
    // k = M/2: X = conj Z_{M/2}
    const h = m >> 1;
    spec[2 * h] = zr[h];
    spec[2 * h + 1] = -zi[h];
  }

  /** the inverse split step: conj Z_k, k < M, into the core's input from the half spectrum (module comment) */
  private join(spec: Float64Array): void {
    const m = this.half;
    const ar = this.core.inRe, ai = this.core.inIm, c = this.cos, sn = this.sin;
    // Z_k = F_k + iG_k, stored conjugated so that the forward transform inverts; Z_{M−k} = F̄_k + iḠ_k
    ar[0] = 0.5 * (spec[0] + spec[2 * m]);
    ai[0] = -0.5 * (spec[0] - spec[2 * m]);
    for (let k = 1, l = m - 1; k < l; k++, l--) {
      const kr = spec[2 * k], ki = spec[2 * k + 1], lr = spec[2 * l], li = spec[2 * l + 1];
      const fr = 0.5 * (kr + lr), fi = 0.5 * (ki - li);
      const dr = kr - lr, di = ki + li;
      // G = (X_k − X̄_{M−k}) e^{2πik/N} / 2
      const gr = 0.5 * (dr * c[k] - di * sn[k]), gi = 0.5 * (dr * sn[k] + di * c[k]);
      ar[k] = fr - gi;
      ai[k] = -(fi + gr);
      ar[l] = fr + gi;
      ai[l] = fi - gr;
    }
    // k = M/2: Z = conj X_{M/2}
    const h = m >> 1;
    ar[h] = spec[2 * h];
    ai[h] = spec[2 * h + 1];
  }
}
