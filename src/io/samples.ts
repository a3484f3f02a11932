/**
 * Potential samples read from a file, for `initial: {kind: samples}`.
 *   .csv: two columns x, V (header optional)                 → {x, values}
 *   .npy: 1-D array of length M                              → {x: null, values}; the values are meant on the
 *         config's own grid x_j = -L/2 + jL/M (M is the file's own length, resampling is the caller's job)
 *   .npy: shape [M, 2] (columns x, V)                        → {x, values}
 * When x is present it must be strictly increasing and uniformly spaced.
 */
import { extname } from 'node:path';
import { readNumericCsv } from './csv.ts';
import { UserError } from '../core/errors.ts';
import { decodeNpy } from './npy.ts';
import { readBoundedFile } from './files.ts';

/** relative tolerance on the sample spacing: far above float64 round-off of printed x values, far below any real non-uniformity */
export const UNIFORM_SPACING_RTOL = 1e-9;
/** fewest samples that define a spacing and a meaningful resampling */
const MIN_SAMPLES = 2;
/** largest samples file read: 64 MiB holds millions of samples, far beyond any grid (common practice) */
export const MAX_SAMPLES_BYTES = 64 * 2 ** 20;

export interface Samples {
  /** sample positions (file's units), or null for a bare 1-D .npy array */
  readonly x: Float64Array | null;
  readonly values: Float64Array;
}

/**
 * Check that x is strictly increasing and uniform: |(x[i+1]-x[i]) - h| ≤ UNIFORM_SPACING_RTOL·h with h the
 * first step x[1]-x[0] (so the message names the first row whose step differs). `rowName(i)` names sample i.
 */
export function checkUniform(x: Float64Array, fileName: string, rowName: (i: number) => string): void {
  const m = x.length;
  for (let i = 0; i + 1 < m; i++) {
    if (!(x[i + 1] > x[i])) {
      throw new UserError(`${fileName}: x is not strictly increasing at ${rowName(i + 1)} (x = ${x[i + 1]} after ${x[i]})`);
    }
  }
  const h = x[1] - x[0];
  for (let i = 0; i + 1 < m; i++) {
    const d = x[i + 1] - x[i];
    if (Math.abs(d - h) > UNIFORM_SPACING_RTOL * h) {
      throw new UserError(
        `${fileName}: x is not uniformly spaced at ${rowName(i + 1)}: step ${d} differs from the first step ${h} ` +
          `by more than ${UNIFORM_SPACING_RTOL} relative (samples must be on a uniform grid)`,
      );
    }
  }
}

/** Read a .csv or .npy file of potential samples (see module doc). */
export function readSamplesFile(path: string): Samples {
  const bytes = readBoundedFile(path, MAX_SAMPLES_BYTES, 'samples file');
  const ext = extname(path).toLowerCase();
  let result: Samples;
  if (ext === '.csv') {
    const csv = readNumericCsv(bytes.toString('utf8'), path);
    if (csv.columns.length !== 2) {
      throw new UserError(`${path}: has ${csv.columns.length} columns, expected 2 (x, V)`);
    }
    const [x, values] = csv.columns;
    if (x.length < MIN_SAMPLES) throw new UserError(`${path}: has ${x.length} data rows, at least ${MIN_SAMPLES} are needed`);
    checkUniform(x, path, (i) => `row ${csv.lines[i]}`);
    result = { x, values };
  } else if (ext === '.npy') {
    const arr = decodeNpy(new Uint8Array(bytes.buffer, bytes.byteOffset, bytes.byteLength), path);
    if (arr.shape.length === 1) {
      if (arr.shape[0] < MIN_SAMPLES) throw new UserError(`${path}: has ${arr.shape[0]} samples, at least ${MIN_SAMPLES} are needed`);
      result = { x: null, values: arr.data };
    } else if (arr.shape.length === 2 && arr.shape[1] === 2) {
      const m = arr.shape[0];
      if (m < MIN_SAMPLES) throw new UserError(`${path}: has ${m} rows, at least ${MIN_SAMPLES} are needed`);
      const x = new Float64Array(m);
      const values = new Float64Array(m);
      for (let i = 0; i < m; i++) {
        x[i] = arr.data[2 * i];
        values[i] = arr.data[2 * i + 1];
      }
      checkUniform(x, path, (i) => `row ${i} (counted from 0)`);
      result = { x, values };
    } else {
      throw new UserError(`${path}: array shape (${arr.shape.join(', ')}) is not allowed: must be 1-D (M,) or (M, 2) with columns x, V`);
    }
  } else {
    throw new UserError(`samples file ${path} has extension ${JSON.stringify(ext)}: allowed are .csv and .npy`);
  }
  return result;
}
