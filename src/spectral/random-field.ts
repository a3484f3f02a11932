/**
 * Stationary Gaussian random fields on the periodic grid by spectral synthesis: white noise w_j ~ N(0, 1) filtered
 * in Fourier space by H(k) = exp(−k²ℓ_c²/4), whose square is the spectrum of the Gaussian correlation
 *
 *     ⟨δV(x) δV(x + r)⟩ = σ² exp(−r²/(2ℓ_c²)),
 *
 * (spectral representation of a stationary process: Shinozuka & Deodatis, Appl. Mech. Rev. 44, 191, 1991) and scaled
 * so that the ensemble variance on the grid is σ² exactly: var y_j = Σ_l h_l² = (1/N) Σ_m H(k_m)² (Parseval), h the
 * kernel of H. The Gaussian deviates come from the seeded generator of core/rng.ts by Box–Muller (Box & Muller,
 * Ann. Math. Stat. 29, 610, 1958), so a realisation is fixed by its seed.
 */
import { makeRng } from '../core/rng.ts';
import type { Grid } from './grid.ts';
import { realFFT } from './ops.ts';

/** a standard normal deviate source from a uniform one on [0, 1) (Box–Muller, both deviates used) */
function normalSource(uniform: () => number): () => number {
  let spare: number | null = null;
  return () => {
    if (spare !== null) {
      const s = spare;
      spare = null;
      return s;
    }
    const r = Math.sqrt(-2 * Math.log(1 - uniform()));
    const phi = 2 * Math.PI * uniform();
    spare = r * Math.sin(phi);
    return r * Math.cos(phi);
  };
}

/** one realisation of the field (module comment) with rms σ and correlation length ℓ_c (grid units), from `seed` */
export function gaussianRandomField(grid: Grid, rms: number, correlation: number, seed: number): Float64Array {
  if (!(rms >= 0 && Number.isFinite(rms))) throw new RangeError(`random field: rms ${rms} must be a finite number ≥ 0`);
  if (!(correlation > 0 && Number.isFinite(correlation))) throw new RangeError(`random field: correlation length ${correlation} must be a finite number > 0`);
  const n = grid.n;
  const normal = normalSource(makeRng(seed));
  const w = Float64Array.from({ length: n }, () => normal());
  const fft = realFFT(n);
  const spec = new Float64Array(n + 2);
  fft.forward(w, spec);
  let power = 0;
  for (let m = 0; m <= n / 2; m++) {
    const h = Math.exp(-(grid.kHalf[m] ** 2) * correlation * correlation / 4);
    spec[2 * m] *= h;
    spec[2 * m + 1] *= h;
    // modes 0 and N/2 once, the others for ±k
    power += (m === 0 || m === n / 2 ? 1 : 2) * h * h;
  }
  const out = new Float64Array(n);
  fft.inverse(spec, out);
  const scale = rms / Math.sqrt(power / n);
  for (let j = 0; j < n; j++) out[j] *= scale;
  return out;
}
