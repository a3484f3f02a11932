/**
 * Control tables of the lattice realisation (physics.md §3, §6), natural units: at `samples` equally spaced times
 * the on-site energies ε_j = u(x_j, λ) + 2J (the band bottom of the uniform lattice at u, J = 1/h²), the
 * nearest-neighbour elements −J + i b_j and the next-nearest i q of the CD Hamiltonian (operators.ts), as
 * amplitude and phase per bond.
 */
import type { Ramp } from '../protocol/ramp.ts';
import { cdTerms, emptyTerms, nearestCoupling, nextNearestCoupling } from './operators.ts';
import type { LatticeSequence } from './sequence.ts';
import { hermiticityCheck } from './verify.ts';

/** amplitude and phase (rad) of one family of bonds, H_jj′ = A e^{iφ}, j′ > j, sample-major */
export interface BondTable {
  amplitude: Float64Array;
  phase: Float64Array;
}

export interface ControlTables {
  /** [samples] (t₀) */
  times: Float64Array;
  /** [samples × M] on-site energies (E₀) */
  onsite: Float64Array;
  /** [samples × (M−1)] nearest and [samples × (M−2)] next-nearest neighbours (amplitudes in E₀) */
  nn: BondTable;
  nnn: BondTable;
  /** largest |Peierls| nn and nnn couplings b_j, q and the largest nn amplitude (E₀) */
  maxNn: number;
  maxNnn: number;
  maxAmplitude: number;
  /** largest relative Hermiticity defect of the sampled Hamiltonians (hermiticityCheck) */
  hermiticityDefect: number;
}

/** the tables of the module doc; `onSample(i)` after each sample */
export function controlTables(seq: LatticeSequence, ramp: Ramp, h: number, samples: number, onSample?: (done: number) => void): ControlTables {
  const S = samples;
  const M = seq.sites.length;
  const t: ControlTables = {
    times: new Float64Array(S),
    onsite: new Float64Array(S * M),
    nn: { amplitude: new Float64Array(S * (M - 1)), phase: new Float64Array(S * (M - 1)) },
    nnn: { amplitude: new Float64Array(S * (M - 2)), phase: new Float64Array(S * (M - 2)) },
    maxNn: 0,
    maxNnn: 0,
    maxAmplitude: 0,
    hermiticityDefect: 0,
  };
  const terms = emptyTerms(M, h);
  const u = new Float64Array(M);
  for (let i = 0; i < S; i++) {
    const s = (ramp.duration * i) / (S - 1);
    t.times[i] = s;
    seq.at(ramp.value(s), u);
    cdTerms(u, ramp.rate(s), 1, terms);
    t.hermiticityDefect = Math.max(t.hermiticityDefect, hermiticityCheck(terms));
    for (let j = 0; j < M; j++) t.onsite[i * M + j] = u[j] + 2 / (h * h);
    for (let j = 0; j < M - 1; j++) {
      const c = nearestCoupling(terms, j);
      t.nn.amplitude[i * (M - 1) + j] = c.amplitude;
      t.nn.phase[i * (M - 1) + j] = c.phase;
      t.maxNn = Math.max(t.maxNn, Math.abs(terms.bond[j]));
      t.maxAmplitude = Math.max(t.maxAmplitude, c.amplitude);
    }
    const c2 = nextNearestCoupling(terms);
    for (let j = 0; j < M - 2; j++) {
      t.nnn.amplitude[i * (M - 2) + j] = c2.amplitude;
      t.nnn.phase[i * (M - 2) + j] = c2.phase;
    }
    t.maxNnn = Math.max(t.maxNnn, Math.abs(terms.nnn));
    onSample?.(i + 1);
  }
  return t;
}
