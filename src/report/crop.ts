/**
 * The x window of a space–time map: the columns where the potential lives, so that wells a few µm wide are not
 * drawn as slivers of a box ten times wider. The caption states the window, the rule and the box.
 */
import { dataNum } from './svg.ts';

/**
 * A column belongs to the potential where |V| exceeds this fraction of the largest |V| over all frames: 1 % is
 * 2.6 of the colour map's 256 levels, below which a cell cannot be told from the background.
 */
export const CROP_FRACTION = 0.01;
/** The window is widened by this fraction of its width on each side so the tails do not touch the frame (common practice). */
export const CROP_MARGIN = 0.1;

export interface XCrop {
  /** the cropped coordinates and rows (subarrays of the inputs) */
  x: Float64Array;
  rows: Float64Array[];
  /** index of the first column kept */
  first: number;
  /** first and last x kept */
  lo: number;
  hi: number;
  /** the box: x[0] … x[0] + n·dx (a periodic grid of n points) */
  box: [number, number];
  /** false when the window is the whole box */
  cropped: boolean;
}

/**
 * Crop a space–time map to the columns where |V| > CROP_FRACTION · max |V| in any row, widened by CROP_MARGIN
 * of the window on each side and clamped to the grid. `x` is a uniform grid; every row has x.length values.
 * All-zero or non-finite data keep the whole box.
 */
export function cropToPotential(x: ArrayLike<number>, rows: readonly ArrayLike<number>[]): XCrop {
  const n = x.length;
  if (n < 2) throw new RangeError(`cropToPotential: x needs at least 2 points, got ${n}`);
  let peak = 0;
  for (const row of rows) for (let j = 0; j < n; j++) if (Number.isFinite(row[j])) peak = Math.max(peak, Math.abs(row[j]));
  let j0 = n;
  let j1 = -1;
  for (const row of rows) {
    for (let j = 0; j < n; j++) {
      if (Math.abs(row[j]) > CROP_FRACTION * peak) {
        j0 = Math.min(j0, j);
        j1 = Math.max(j1, j);
      }
    }
  }
  if (!(peak > 0) || j1 < j0) [j0, j1] = [0, n - 1];
  const pad = Math.ceil(CROP_MARGIN * (j1 - j0 + 1));
  j0 = Math.max(0, j0 - pad);
  j1 = Math.min(n - 1, j1 + pad);
  // at least two columns: a heat map needs a grid step
  if (j1 === j0) {
    if (j1 < n - 1) j1++;
    else j0--;
  }
  const xs = Float64Array.from(x);
  const dx = (xs[n - 1] - xs[0]) / (n - 1);
  return {
    x: xs.subarray(j0, j1 + 1),
    rows: rows.map((r) => Float64Array.from(r).subarray(j0, j1 + 1)),
    first: j0,
    lo: xs[j0],
    hi: xs[j1],
    box: [xs[0], xs[0] + n * dx],
    cropped: j0 > 0 || j1 < n - 1,
  };
}

/** the same window of another row on the same grid */
export function cropRow(c: XCrop, row: Float64Array): Float64Array {
  return row.subarray(c.first, c.first + c.x.length);
}

/** The caption sentence of a crop: the window, the rule and the box (empty when nothing was cropped). */
export function cropCaption(c: XCrop, unit: string): string {
  if (!c.cropped) return '';
  const f = (v: number): string => dataNum(Number(v.toPrecision(3)));
  return ` x cropped to ${f(c.lo)} … ${f(c.hi)} ${unit}, where |V| > ${CROP_FRACTION * 100} % of its largest value over all frames (plus a ${CROP_MARGIN * 100} % margin); the box is ${f(c.box[0])} … ${f(c.box[1])} ${unit}.`;
}
