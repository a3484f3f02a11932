/**
 * Shot-to-shot potential noise: every experimental shot paints the trap with its own static error δV_s(ξ) (a
 * seeded Gaussian random field, spectral/random-field.ts), prepares the states of that trap and runs the protocol
 * (propagator.ts labPotential adds δV_s after the optics). What a lab measures is the average over shots, so the
 * shots' verify results are combined into one: per drive and state the mean fidelity and excess energy, the
 * thermal and Fermi-sea figures and the fidelity traces averaged the same way, the energies averaged; beside it the
 * spread over shots (sample standard deviation, the worst shot). Diagnostics of one trap (isospectral drift, the
 * correction's size, the thermal weights, warnings) are the first shot's, named as such.
 */
import { gaussianRandomField } from '../spectral/random-field.ts';
import type { Grid } from '../spectral/grid.ts';
import type { DriveResult, VerifyResult } from './verify.ts';

/** the noise of a run: rms (E₀), correlation length (ℓ), the number of shots and the seed of the first */
export interface ShotNoise {
  rms: number;
  correlation: number;
  shots: number;
  seed: number;
}

/** the static noise of shot s (0-based): the field of seed `seed + s` */
export function shotNoise(grid: Grid, noise: ShotNoise, shot: number): Float64Array {
  return gaussianRandomField(grid, noise.rms, noise.correlation, noise.seed + shot);
}

/** the spread over shots of one drive */
export interface ShotSpread {
  drive: string;
  /** per state: sample standard deviation of the fidelity over shots (0 for one shot) */
  fidelityStd: number[];
  /** per state: the lowest fidelity of any shot */
  worstFidelity: number[];
  /** per shot: the drive's lowest state fidelity */
  minFidelityPerShot: number[];
}

const mean = (xs: readonly number[]) => xs.reduce((a, b) => a + b, 0) / xs.length;
const std = (xs: readonly number[]) => {
  if (xs.length < 2) return 0;
  const m = mean(xs);
  return Math.sqrt(xs.reduce((a, x) => a + (x - m) ** 2, 0) / (xs.length - 1));
};

/** the mean of a number field over shots, or undefined when any shot lacks it */
function meanOf<T>(items: readonly (T | null)[], pick: (t: T) => number | undefined): number | undefined {
  const vals = items.map((t) => (t === null ? undefined : pick(t)));
  return vals.every((v) => v !== undefined) ? mean(vals as number[]) : undefined;
}

/** one drive averaged over the shots (same drive in every shot) */
function meanDrive(parts: readonly DriveResult[]): DriveResult {
  const first = parts[0];
  const perState = (pick: (d: DriveResult) => number[]) => pick(first).map((_, i) => mean(parts.map((d) => pick(d)[i])));
  const fidelity = perState((d) => d.fidelity);
  const thermal = first.thermal
    ? { ...first.thermal, ensembleFidelity: meanOf(parts.map((d) => d.thermal), (t) => t.ensembleFidelity) as number, meanExcessEnergy: meanOf(parts.map((d) => d.thermal), (t) => t.meanExcessEnergy) as number, uhlmannFidelity: meanOf(parts.map((d) => d.thermal), (t) => t.uhlmannFidelity) }
    : null;
  const fermions = first.fermions ? { ...first.fermions, manyBodyFidelity: meanOf(parts.map((d) => d.fermions), (f) => f.manyBodyFidelity) as number } : null;
  const trace = first.trace
    ? { times: first.trace.times, fidelity: first.trace.fidelity.map((row, i) => row.map((_, k) => mean(parts.map((d) => (d.trace as NonNullable<DriveResult['trace']>).fidelity[i][k])))) }
    : null;
  const range = first.paintedRange ? { min: Math.min(...parts.map((d) => d.paintedRange?.min ?? Infinity)), max: Math.max(...parts.map((d) => d.paintedRange?.max ?? -Infinity)) } : null;
  return {
    ...first, fidelity, excessEnergy: perState((d) => d.excessEnergy), minFidelity: Math.min(...fidelity), thermal, fermions, trace, paintedRange: range,
    normDrift: Math.max(...parts.map((d) => d.normDrift)),
  };
}

/** the shots' results combined (module comment); every shot must have run the same drives on the same states */
export function averageShots(shots: readonly VerifyResult[]): { result: VerifyResult; spread: ShotSpread[] } {
  const first = shots[0];
  for (const r of shots) {
    if (r.drives.length !== first.drives.length || r.states.length !== first.states.length) throw new Error('internal error: shots with different drives or states');
  }
  const drives = first.drives.map((d, k) => meanDrive(shots.map((r) => r.drives[k])));
  const states = first.states.map((st, i) => ({ ...st, energyStart: mean(shots.map((r) => r.states[i].energyStart)), energyEnd: mean(shots.map((r) => r.states[i].energyEnd)) }));
  const spread = first.drives.map((d, k) => ({
    drive: d.drive,
    fidelityStd: d.fidelity.map((_, i) => std(shots.map((r) => r.drives[k].fidelity[i]))),
    worstFidelity: d.fidelity.map((_, i) => Math.min(...shots.map((r) => r.drives[k].fidelity[i]))),
    minFidelityPerShot: shots.map((r) => r.drives[k].minFidelity),
  }));
  const timings = { ...first.timings, eigenMs: shots.reduce((a, r) => a + r.timings.eigenMs, 0), propagationMs: shots.reduce((a, r) => a + r.timings.propagationMs, 0), totalMs: shots.reduce((a, r) => a + r.timings.totalMs, 0) };
  // one shot's diagnostics stand for all (each noisy trap has its own numbers): the first shot's drift, warnings and
  // correction size; the eigen residual is the worst of any shot
  const warnings = shots.length > 1 && first.warnings.length > 0 ? [...first.warnings.map((w) => `shot 1 of ${shots.length}: ${w}`)] : [...first.warnings];
  const eigen = { ...first.eigen, maxResidual: Math.max(...shots.map((r) => r.eigen.maxResidual)) };
  return { result: { ...first, drives, states, eigen, timings, warnings }, spread };
}
