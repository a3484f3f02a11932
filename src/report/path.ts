/**
 * Data paths for line figures: SVG path strings split at unplottable points, min/max decimation of dense
 * monotone series, and the segment–rectangle test used to keep legends off the data.
 */
import type { ContinuousScale } from 'd3-node';
import { px } from './svg.ts';

export interface PathResult {
  d: string;
  segments: number;
  points: number;
  /** Pixel segments (x0,y0,x1,y1 interleaved) for overlap tests during layout; isolated points repeat. */
  pixelSegments: number[];
  extremes: { xmin: number; xmax: number; ymin: number; ymax: number };
  decimated: boolean;
}

type Plottable = (xv: number, yv: number) => boolean;

/** plottable-point count, data extremes and whether x never decreases over the plottable points */
function scanSeries(x: ArrayLike<number>, y: ArrayLike<number>, n: number, plottable: Plottable): { monotone: boolean; count: number; ext: PathResult['extremes'] } {
  let monotone = true;
  let prev = -Infinity;
  let count = 0;
  const ext = { xmin: Infinity, xmax: -Infinity, ymin: Infinity, ymax: -Infinity };
  for (let i = 0; i < n; i++) {
    const xv = x[i];
    const yv = y[i];
    if (!plottable(xv, yv)) continue;
    count++;
    if (xv < prev) monotone = false;
    prev = xv;
    if (xv < ext.xmin) ext.xmin = xv;
    if (xv > ext.xmax) ext.xmax = xv;
    if (yv < ext.ymin) ext.ymin = yv;
    if (yv > ext.ymax) ext.ymax = yv;
  }
  return { monotone, count, ext };
}

/** Accumulates path commands: a "break" starts a new subpath ("M") at the next point. */
class PathWriter {
  readonly parts: string[] = [];
  readonly segs: number[] = [];
  segments = 0;
  points = 0;
  private open = false;
  private lastX = 0;
  private lastY = 0;
  emit(X: number, Y: number): void {
    if (!this.open) {
      this.parts.push(`M${px(X)},${px(Y)}`);
      this.segments++;
      this.open = true;
      this.segs.push(X, Y, X, Y);
    } else {
      this.parts.push(`L${px(X)},${px(Y)}`);
      this.segs.push(this.lastX, this.lastY, X, Y);
    }
    this.lastX = X;
    this.lastY = Y;
    this.points++;
  }
  break(): void {
    this.open = false;
  }
}

/** every plottable point, in order */
function writeAll(w: PathWriter, x: ArrayLike<number>, y: ArrayLike<number>, n: number, sx: ContinuousScale, sy: ContinuousScale, plottable: Plottable): void {
  for (let i = 0; i < n; i++) {
    const xv = x[i];
    const yv = y[i];
    if (!plottable(xv, yv)) {
      w.break();
      continue;
    }
    w.emit(sx(xv), sy(yv));
  }
}

/**
 * Min/max decimation: bucket by integer pixel column; within a run of plottable points, flush the first,
 * minimum, maximum and last point (in index order) at a column change or a break.
 */
function writeDecimated(w: PathWriter, x: ArrayLike<number>, y: ArrayLike<number>, n: number, sx: ContinuousScale, sy: ContinuousScale, plottable: Plottable): void {
  let col = NaN;
  let iFirst = -1;
  let iMin = -1;
  let iMax = -1;
  let iLast = -1;
  const flush = (): void => {
    if (iFirst < 0) return;
    const idx = [iFirst, iMin, iMax, iLast].sort((a, b) => a - b);
    let last = -1;
    for (const k of idx) {
      if (k === last) continue;
      last = k;
      w.emit(sx(x[k]), sy(y[k]));
    }
    iFirst = iMin = iMax = iLast = -1;
  };
  for (let i = 0; i < n; i++) {
    const xv = x[i];
    const yv = y[i];
    if (!plottable(xv, yv)) {
      flush();
      w.break();
      col = NaN;
      continue;
    }
    const c = Math.floor(sx(xv));
    if (c !== col) {
      flush();
      col = c;
    }
    if (iFirst < 0) {
      iFirst = iMin = iMax = i;
    } else {
      if (yv < y[iMin]) iMin = i;
      if (yv > y[iMax]) iMax = i;
    }
    iLast = i;
  }
  flush();
}

/**
 * Build an SVG path from data, breaking it into separate subpaths (new "M") at every point that cannot be
 * plotted (non-finite x or y, or y ≤ 0 on a log axis). When x is non-decreasing and there are more than
 * `maxPerPx` points per pixel column, keeps per pixel column the first, minimum, maximum and last point in
 * order (min/max decimation), which preserves every extreme exactly.
 */
export function buildPath(
  x: ArrayLike<number>,
  y: ArrayLike<number>,
  sx: ContinuousScale,
  sy: ContinuousScale,
  plottable: Plottable,
  widthPx: number,
  maxPerPx = 4,
): PathResult {
  const n = Math.min(x.length, y.length);
  const scan = scanSeries(x, y, n, plottable);
  const decimate = scan.monotone && scan.count > maxPerPx * widthPx;
  const w = new PathWriter();
  if (decimate) writeDecimated(w, x, y, n, sx, sy, plottable);
  else writeAll(w, x, y, n, sx, sy, plottable);
  return { d: w.parts.join(''), segments: w.segments, points: w.points, pixelSegments: w.segs, extremes: scan.ext, decimated: decimate };
}

/** True if segment (x0,y0)-(x1,y1) intersects the axis-aligned rectangle (Liang–Barsky clipping test). */
export function segmentHitsRect(x0: number, y0: number, x1: number, y1: number, r: { x: number; y: number; w: number; h: number }): boolean {
  let t0 = 0;
  let t1 = 1;
  const dx = x1 - x0;
  const dy = y1 - y0;
  const p = [-dx, dx, -dy, dy];
  const q = [x0 - r.x, r.x + r.w - x0, y0 - r.y, r.y + r.h - y0];
  for (let i = 0; i < 4; i++) {
    if (p[i] === 0) {
      if (q[i] < 0) return false;
    } else {
      const t = q[i] / p[i];
      if (p[i] < 0) {
        if (t > t1) return false;
        if (t > t0) t0 = t;
      } else {
        if (t < t0) return false;
        if (t < t1) t1 = t;
      }
    }
  }
  return true;
}

/** count of the points `ok` rejects */
export function countUnplottable(x: ArrayLike<number>, y: ArrayLike<number>, ok: Plottable): number {
  let k = 0;
  for (let i = 0; i < x.length; i++) if (!ok(x[i], y[i])) k++;
  return k;
}

/** whether any of the interleaved pixel segments crosses the rectangle */
export function anySegmentHits(all: number[][], r: { x: number; y: number; w: number; h: number }): boolean {
  for (const s of all) {
    for (let i = 0; i + 3 < s.length; i += 4) {
      if (segmentHitsRect(s[i], s[i + 1], s[i + 2], s[i + 3], r)) return true;
    }
  }
  return false;
}
