/**
 * The flow fit of every interval (check/flowfit.ts `fitInterval`) and the bound-state energies of chosen frames
 * (check/spectrum.ts `frameEnergies`), serially or on worker threads (check/worker.mjs): intervals and frames are
 * independent and both functions are pure, so the parallel results are identical to the serial ones. Small inputs
 * run serially (a worker's start-up, loading the TypeScript sources, costs about as much as a few intervals).
 */
import { coreCount, runPool } from '../core/worker-pool.ts';
import { NumericalError } from '../core/errors.ts';
import type { Grid } from '../spectral/grid.ts';
import { fitInterval, summarise, type IntervalFit, type SequenceFit, type SequenceIntervalFit } from './flowfit.ts';
import { frameEnergies } from './spectrum.ts';

/** below this many intervals the fit runs serially (worker start-up ~0.5–1 s against ~0.1–0.5 s per interval) */
export const PARALLEL_MIN_INTERVALS = 8;

export interface ParallelOptions {
  /** worker threads: 1 = serial; default: every core when there are PARALLEL_MIN_INTERVALS intervals or more */
  workers?: number;
  /** called after each finished task (done, total) */
  onProgress?: (done: number, total: number) => void;
}

export interface SequenceWork {
  fit: SequenceFit;
  /** bound-state energies (E₀) of the frames asked for, by frame index */
  energies: Map<number, number[]>;
}

type Task = { kind: 'fit'; length: number; n: number; uk: Float64Array; ukNext: Float64Array } | { kind: 'spectrum'; length: number; n: number; u: Float64Array };

function collect(fits: IntervalFit[], passTolerance: number): SequenceFit {
  const intervals: SequenceIntervalFit[] = fits.map((f, index) => ({ ...f, index, pass: f.residual <= passTolerance }));
  return summarise(intervals, passTolerance);
}

/** the worker count that `opts` asks for, for `intervals` intervals */
export function workerCount(intervals: number, opts: ParallelOptions = {}): number {
  if (opts.workers !== undefined) return Math.max(1, Math.min(opts.workers, intervals));
  return intervals >= PARALLEL_MIN_INTERVALS ? Math.min(coreCount(), intervals) : 1;
}

/** Fit every interval serially (in order) and sum the Δτ. */
export function fitAllSerial(grid: Grid, frames: readonly Float64Array[], passTolerance: number, onProgress?: (done: number, total: number) => void): SequenceFit {
  const total = frames.length - 1;
  const fits: IntervalFit[] = [];
  for (let i = 0; i < total; i++) {
    fits.push(fitInterval(grid, frames[i], frames[i + 1]));
    onProgress?.(i + 1, total);
  }
  return collect(fits, passTolerance);
}

/** Fit every interval and compute the spectra of `spectrumFrames`, on worker threads when workerCount(…) > 1. */
export async function fitAll(grid: Grid, frames: readonly Float64Array[], passTolerance: number, spectrumFrames: readonly number[], opts: ParallelOptions = {}): Promise<SequenceWork> {
  const total = frames.length - 1;
  const size = workerCount(total, opts);
  if (size <= 1) {
    const fit = fitAllSerial(grid, frames, passTolerance, opts.onProgress);
    return { fit, energies: new Map(spectrumFrames.map((k) => [k, frameEnergies(grid, frames[k])])) };
  }
  const { length, n } = grid;
  const tasks: Task[] = [
    ...Array.from({ length: total }, (_, i): Task => ({ kind: 'fit', length, n, uk: frames[i], ukNext: frames[i + 1] })),
    ...spectrumFrames.map((k): Task => ({ kind: 'spectrum', length, n, u: frames[k] })),
  ];
  let results: (IntervalFit | number[])[];
  try {
    results = await runPool<Task, IntervalFit | number[]>(new URL('./worker.mjs', import.meta.url), tasks, size, opts.onProgress);
  } catch (e) {
    throw new NumericalError(`check on ${size} worker threads: ${e instanceof Error ? e.message : String(e)}`);
  }
  const fits = results.slice(0, total).filter((r): r is IntervalFit => !Array.isArray(r));
  const energies = new Map(spectrumFrames.map((k, i) => [k, results[total + i] as number[]]));
  return { fit: collect(fits, passTolerance), energies };
}
