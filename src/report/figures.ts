/**
 * Print-quality figure primitives returning standalone SVG strings (built on d3-node's jsdom and d3 scales).
 *
 * Conventions: viewBox in px at 96 dpi, width/height in mm (see style.ts); text is <text>; every plotted
 * element carries data-* attributes describing what it shows (series name, point counts, data extremes,
 * value), so that tests and tools can check a figure without rendering it. Non-finite data are never written:
 * paths are split into subpaths at unplottable points and the counts are reported in data attributes.
 *
 * Heatmap cells are embedded as one <image> holding a PNG (encoded in png.ts) rather than as <rect>s:
 * the size is then bounded by the cell cap independent of the data (≤ 4 bytes/cell before compression; a
 * 200×300 cap gives < 330 kB base64 in the worst case), rendering is seam-free (adjacent <rect>s show
 * anti-aliasing hairlines in many viewers), and parsing stays fast. Axes, labels, ticks and colour bar
 * labels remain vector.
 */
import type { ContinuousScale, D3Selection } from 'd3-node';
import { UserError } from '../core/errors.ts';
import { encodePngRgba, pngDataUri } from './png.ts';
import {
  FONT_PT,
  STROKE,
  type FigureWidth,
  defaultHeightMm,
  estimateTextWidthPx,
  figureWidthMm,
  mmToPx,
  ptToPx,
  seriesColor,
  seriesDash,
  viridisLut,
} from './style.ts';
import {
  type Canvas,
  type LegendEntry,
  type PlotRect,
  XLINK_NS,
  addText,
  bottomAxisHeight,
  bottomLabelOffset,
  buildPath,
  createCanvas,
  dataNum,
  drawAxis,
  drawLegend,
  finish,
  idRef,
  legendBoxSize,
  legendGridSize,
  linearTicks,
  logTicks,
  px,
  segmentHitsRect,
  sideAxisWidth,
  sideLabelOffset,
  tickLabelWidth,
} from './svg.ts';

/** Default heatmap cell cap (columns along x, rows along y); keeps files far below 2 MB (see module doc). */
export const DEFAULT_MAX_CELLS = { x: 300, y: 200 } as const;
/**
 * Upper limit for a caller's maxCells x·y: even incompressible PNG data (4 bytes/cell, ×4/3 for base64) then
 * stay ≤ 1.6 MB, so any heatmap file is < 2 MB.
 */
export const MAX_TOTAL_CELLS = 300_000;
/** At most this many markers per series; denser series get every k-th point marked (legibility, common practice). */
export const MAX_MARKERS = 60;
/** Marker radius in px (≈ 0.5 mm). */
const MARKER_R = 1.8;
/** Inset of an in-plot legend from the plot frame, px. */
const LEGEND_INSET = 4;
/** Extra clearance around an in-plot legend when testing it against data, px (stroke half-width + markers). */
const LEGEND_CLEARANCE = 2.5;
/** Fraction of the y span added above and below the data in line charts (matplotlib's default is 5 %). */
const Y_MARGIN = 0.04;
/** Relative tolerance for "uniform grid" in heatmap coordinates (float round-off of linspace is ~1e-15). */
const GRID_UNIFORM_RTOL = 1e-3;
/** Colour lookup table size for heatmaps (8-bit output cannot resolve more). */
const LUT_SIZE = 256;

export interface LineSeries {
  name: string;
  x: ArrayLike<number>;
  y: ArrayLike<number>;
  /** undefined: automatic dash pattern by series index (first solid); true: always dashed; false: solid. */
  dashed?: boolean;
  markers?: boolean;
}

export interface LineChartOptions {
  title?: string;
  xLabel: string;
  yLabel: string;
  series: LineSeries[];
  logY?: boolean;
  width: FigureWidth;
  annotations?: string[];
  /** Plot-block height in mm (legend outside / annotations add to it); default from style.ts. */
  heightMm?: number;
}

export interface HeatmapOverlay {
  name: string;
  x: ArrayLike<number>;
  y: ArrayLike<number>;
}

export interface HeatmapOptions {
  title?: string;
  xLabel: string;
  yLabel: string;
  zLabel: string;
  /** Cell-centre coordinates along x (uniform, increasing), length nx. */
  x: Float64Array;
  /** Cell-centre coordinates along y (uniform, increasing), length ny. */
  y: Float64Array;
  /** ny rows, row j holds z(x_i, y_j) for i = 0…nx−1. */
  z: Float64Array[];
  overlays?: HeatmapOverlay[];
  width: FigureWidth;
  /** Cell cap; the data are block-averaged down to at most this many cells. */
  maxCells?: { x: number; y: number };
  /** Colour-scale range; default: finite min/max of the displayed (averaged) cells. */
  zRange?: [number, number];
  heightMm?: number;
  annotations?: string[];
}

export interface BarValue {
  name: string;
  value: number;
}
export interface BarGroup {
  label: string;
  values: BarValue[];
}
export interface BarChartOptions {
  title?: string;
  xLabel: string;
  yLabel: string;
  groups: BarGroup[];
  logY?: boolean;
  width?: FigureWidth;
  annotations?: string[];
  heightMm?: number;
}

// ---------------------------------------------------------------------------------------------------------
// shared helpers

function titleHeight(title: string | undefined): number {
  return title ? ptToPx(FONT_PT.title) * 1.6 + 2 : 6;
}

function drawTitle(c: Canvas, title: string | undefined): void {
  if (title) addText(c.root, title, c.widthPx / 2, ptToPx(FONT_PT.title) * 1.15, FONT_PT.title, { anchor: 'middle', cls: 'title' });
}

/** Greedy word wrap using the estimated glyph width. */
function wrapText(text: string, fontPt: number, maxWidth: number): string[] {
  const words = text.split(/\s+/).filter((w) => w.length > 0);
  const lines: string[] = [];
  let cur = '';
  for (const w of words) {
    const cand = cur ? `${cur} ${w}` : w;
    if (cur && estimateTextWidthPx(cand, fontPt) > maxWidth) {
      lines.push(cur);
      cur = w;
    } else cur = cand;
  }
  if (cur) lines.push(cur);
  return lines.length > 0 ? lines : [''];
}

/** Draw annotation lines starting at baseline-top y; returns the height used. */
function drawAnnotations(c: Canvas, notes: string[] | undefined, x: number, y: number, maxWidth: number): number {
  if (!notes || notes.length === 0) return 0;
  const g = c.root.append('g').attr('class', 'annotations');
  const rh = ptToPx(FONT_PT.annotation) * 1.3;
  let yy = y;
  notes.forEach((note, i) => {
    const lines = wrapText(note, FONT_PT.annotation, maxWidth);
    const t = addText(g, '', x, yy + ptToPx(FONT_PT.annotation), FONT_PT.annotation, { cls: 'annotation' });
    t.attr('data-annotation', String(i));
    lines.forEach((ln, k) => {
      t.append('tspan').attr('x', px(x)).attr('dy', k === 0 ? '0' : px(rh)).text(ln);
    });
    yy += lines.length * rh;
  });
  return yy - y + 2;
}

function checkLabel(key: string, v: unknown): string {
  if (typeof v !== 'string') throw new UserError(`${key} must be a string, got ${JSON.stringify(v)}`);
  return v;
}

function checkWidth(key: string, w: unknown): FigureWidth {
  if (w !== 'single' && w !== 'double') throw new UserError(`${key} must be 'single' or 'double', got ${JSON.stringify(w)}`);
  return w;
}

function checkHeight(key: string, h: number | undefined, width: FigureWidth): number {
  if (h === undefined) return defaultHeightMm(width);
  if (!Number.isFinite(h) || h < 20 || h > 250) throw new UserError(`${key} must be a number of mm in [20, 250], got ${h}`);
  return h;
}

/** Padded domain for a range of finite values (lo ≤ hi), widened if degenerate; linear axes. */
function linearDomain(lo: number, hi: number): [number, number] {
  if (!(lo <= hi)) return [0, 1];
  if (lo === hi) {
    const d = lo === 0 ? 1 : Math.abs(lo) * 0.05;
    return [lo - d, hi + d];
  }
  return [lo, hi];
}

function logDomain(lo: number, hi: number): [number, number] {
  if (!(lo <= hi) || !(lo > 0)) return [1, 10];
  if (lo === hi) return [lo / 10, hi * 10];
  return [lo, hi];
}

/** Widen a linear y domain by Y_MARGIN of its span on each side so data do not touch the frame. */
function padDomain(d: [number, number], log: boolean): [number, number] {
  // log axes are extended to whole decades by nice() anyway; padding would add an empty decade
  if (log) return d;
  const m = (d[1] - d[0]) * Y_MARGIN;
  return [d[0] - m, d[1] + m];
}

function makeYScale(c: Canvas, log: boolean, dom: [number, number], plot: PlotRect): ContinuousScale {
  const s = (log ? c.d3.scaleLog() : c.d3.scaleLinear()).domain(dom).range([plot.top + plot.height, plot.top]);
  return s.nice();
}

function clipGroup(c: Canvas, plot: PlotRect, pad: number): D3Selection {
  const id = idRef('clip');
  c.root
    .append('clipPath')
    .attr('id', id)
    .append('rect')
    .attr('x', px(plot.left - pad))
    .attr('y', px(plot.top - pad))
    .attr('width', px(plot.width + 2 * pad))
    .attr('height', px(plot.height + 2 * pad));
  return c.root.append('g').attr('class', 'plot-data').attr('clip-path', `url(#${id})`);
}

function drawFrame(c: Canvas, plot: PlotRect): void {
  c.root
    .append('rect')
    .attr('class', 'plot-area')
    .attr('data-x', px(plot.left))
    .attr('data-y', px(plot.top))
    .attr('data-width', px(plot.width))
    .attr('data-height', px(plot.height))
    .attr('x', px(plot.left))
    .attr('y', px(plot.top))
    .attr('width', px(plot.width))
    .attr('height', px(plot.height))
    .attr('fill', 'none')
    .attr('stroke', '#000000')
    .attr('stroke-width', px(STROKE.axis));
}

function seriesDashFor(i: number, dashed: boolean | undefined): string {
  if (dashed === false) return '';
  const auto = seriesDash(i);
  if (dashed === true && auto === '') return seriesDash(1);
  return auto;
}

function checkXY(key: string, x: ArrayLike<number>, y: ArrayLike<number>): void {
  if (!x || !y || typeof x.length !== 'number' || typeof y.length !== 'number') {
    throw new UserError(`${key}: x and y must be arrays of numbers`);
  }
  if (x.length !== y.length) {
    throw new UserError(`${key}: x has ${x.length} values but y has ${y.length}; they must have the same length`);
  }
}

// ---------------------------------------------------------------------------------------------------------
// line chart

/**
 * Line chart of one or more series y(x). Series are told apart by Okabe–Ito colour and by dash pattern.
 * The legend goes into the first plot corner (top-right, top-left, bottom-right, bottom-left) whose box no data
 * segment crosses; if there is none, it goes below the plot. Each series path carries data-series,
 * data-index, data-n, data-points, data-nonfinite, data-segments, data-xmin/xmax/ymin/ymax and data-decimated.
 */
export function lineChart(opts: LineChartOptions): string {
  const width = checkWidth('lineChart.width', opts.width);
  const xLabel = checkLabel('lineChart.xLabel', opts.xLabel);
  const yLabel = checkLabel('lineChart.yLabel', opts.yLabel);
  if (!Array.isArray(opts.series) || opts.series.length === 0) {
    throw new UserError(`lineChart.series must be a non-empty list of series, got ${JSON.stringify(opts.series?.length ?? opts.series)}`);
  }
  const logY = opts.logY === true;
  opts.series.forEach((s, i) => {
    checkLabel(`lineChart.series[${i}].name`, s.name);
    checkXY(`lineChart.series[${i}] (${JSON.stringify(s.name)})`, s.x, s.y);
  });
  const plottable = logY
    ? (xv: number, yv: number): boolean => Number.isFinite(xv) && Number.isFinite(yv) && yv > 0
    : (xv: number, yv: number): boolean => Number.isFinite(xv) && Number.isFinite(yv);

  let xmin = Infinity;
  let xmax = -Infinity;
  let ymin = Infinity;
  let ymax = -Infinity;
  for (const s of opts.series) {
    const n = s.x.length;
    for (let i = 0; i < n; i++) {
      const xv = s.x[i];
      const yv = s.y[i];
      if (!plottable(xv, yv)) continue;
      if (xv < xmin) xmin = xv;
      if (xv > xmax) xmax = xv;
      if (yv < ymin) ymin = yv;
      if (yv > ymax) ymax = yv;
    }
  }
  const empty = !(xmin <= xmax);

  const W = mmToPx(figureWidthMm(width));
  const H0 = mmToPx(checkHeight('lineChart.heightMm', opts.heightMm, width));
  const c = createCanvas(W, 'line');
  c.root.attr('data-series-count', String(opts.series.length)).attr('data-log-y', String(logY));
  if (empty) c.root.attr('data-empty', 'true');

  const top = titleHeight(opts.title);
  const bottom = bottomAxisHeight();
  const plotH = H0 - top - bottom;
  // y ticks first (their label widths set the left margin)
  const yScale = makeYScale(c, logY, padDomain(logY ? logDomain(ymin, ymax) : linearDomain(ymin, ymax), logY), { left: 0, top, width: 1, height: plotH });
  const yTicks = logY ? logTicks(yScale, plotH) : linearTicks(yScale, plotH);
  const left = sideAxisWidth(yTicks) + 3;
  const xScale0 = c.d3.scaleLinear().domain(linearDomain(xmin, xmax)).nice();
  const lastXLabel = linearTicks(xScale0.range([0, W - left]), W - left).at(-1)?.label ?? '';
  const right = Math.max(8, tickLabelWidth(lastXLabel) / 2 + 3);
  const plot: PlotRect = { left, top, width: W - left - right, height: plotH };
  const xScale = c.d3.scaleLinear().domain(linearDomain(xmin, xmax)).range([plot.left, plot.left + plot.width]).nice();
  const xTicks = linearTicks(xScale, plot.width);

  drawTitle(c, opts.title);
  drawAxis(c.root, 'bottom', xScale, xTicks, plot, xLabel, 'x', bottomLabelOffset());
  drawAxis(c.root, 'left', yScale, yTicks, plot, yLabel, 'y', sideLabelOffset(yTicks));

  const data = clipGroup(c, plot, 3);
  const allSegs: number[][] = [];
  const legend: LegendEntry[] = [];
  opts.series.forEach((s, i) => {
    const color = seriesColor(i);
    const dash = seriesDashFor(i, s.dashed);
    const pr = buildPath(s.x, s.y, xScale, yScale, plottable, plot.width);
    const n = s.x.length;
    const g = data.append('g').attr('class', 'series').attr('data-series', s.name).attr('data-index', String(i));
    const path = g
      .append('path')
      .attr('class', 'series-line')
      .attr('data-series', s.name)
      .attr('data-index', String(i))
      .attr('data-n', String(n))
      .attr('data-points', String(pr.points))
      .attr('data-nonfinite', String(countUnplottable(s.x, s.y, plottable)))
      .attr('data-segments', String(pr.segments))
      .attr('data-decimated', String(pr.decimated))
      .attr('stroke', color)
      .attr('stroke-width', px(STROKE.data))
      .attr('stroke-linejoin', 'round')
      .attr('stroke-linecap', 'round')
      .attr('fill', 'none');
    if (pr.points > 0) {
      path
        .attr('data-xmin', dataNum(pr.extremes.xmin))
        .attr('data-xmax', dataNum(pr.extremes.xmax))
        .attr('data-ymin', dataNum(pr.extremes.ymin))
        .attr('data-ymax', dataNum(pr.extremes.ymax))
        .attr('d', pr.d);
    }
    if (dash) path.attr('stroke-dasharray', dash);
    allSegs.push(pr.pixelSegments);
    if (s.markers) {
      const finite: number[] = [];
      for (let k = 0; k < n; k++) if (plottable(s.x[k], s.y[k])) finite.push(k);
      const stride = Math.max(1, Math.ceil(finite.length / MAX_MARKERS));
      const mg = g.append('g').attr('class', 'markers').attr('data-series', s.name).attr('data-stride', String(stride)).attr('fill', color);
      const ms: number[] = [];
      for (let k = 0; k < finite.length; k += stride) {
        const X = xScale(s.x[finite[k]]);
        const Y = yScale(s.y[finite[k]]);
        mg.append('circle').attr('cx', px(X)).attr('cy', px(Y)).attr('r', px(MARKER_R));
        ms.push(X - MARKER_R, Y, X + MARKER_R, Y, X, Y - MARKER_R, X, Y + MARKER_R);
      }
      allSegs.push(ms);
    }
    legend.push({ name: s.name, color, dash, kind: 'line', marker: s.markers === true });
  });
  drawFrame(c, plot);

  let H = H0;
  if (opts.series.length >= 2) {
    const box = legendBoxSize(legend);
    const corners: Array<[string, number, number]> = [
      ['top-right', plot.left + plot.width - LEGEND_INSET - box.w, plot.top + LEGEND_INSET],
      ['top-left', plot.left + LEGEND_INSET, plot.top + LEGEND_INSET],
      ['bottom-right', plot.left + plot.width - LEGEND_INSET - box.w, plot.top + plot.height - LEGEND_INSET - box.h],
      ['bottom-left', plot.left + LEGEND_INSET, plot.top + plot.height - LEGEND_INSET - box.h],
    ];
    const fits = box.w + 2 * LEGEND_INSET <= plot.width && box.h + 2 * LEGEND_INSET <= plot.height;
    let chosen: [string, number, number] | undefined;
    if (fits) {
      for (const cand of corners) {
        const r = { x: cand[1] - LEGEND_CLEARANCE, y: cand[2] - LEGEND_CLEARANCE, w: box.w + 2 * LEGEND_CLEARANCE, h: box.h + 2 * LEGEND_CLEARANCE };
        if (!anySegmentHits(allSegs, r)) {
          chosen = cand;
          break;
        }
      }
    }
    if (chosen) {
      drawLegend(c.root, legend, chosen[1], chosen[2], box, 1, box.w, chosen[0], true);
    } else {
      const grid = legendGridSize(legend, W - plot.left - 4);
      drawLegend(c.root, legend, plot.left, H, grid, grid.cols, grid.colW, 'below', false);
      H += grid.h + 2;
    }
  }
  H += drawAnnotations(c, opts.annotations, plot.left, H, W - plot.left - 4);
  return finish(c, H + 2);
}

function countUnplottable(x: ArrayLike<number>, y: ArrayLike<number>, ok: (a: number, b: number) => boolean): number {
  let k = 0;
  for (let i = 0; i < x.length; i++) if (!ok(x[i], y[i])) k++;
  return k;
}

function anySegmentHits(all: number[][], r: { x: number; y: number; w: number; h: number }): boolean {
  for (const s of all) {
    for (let i = 0; i + 3 < s.length; i += 4) {
      if (segmentHitsRect(s[i], s[i + 1], s[i + 2], s[i + 3], r)) return true;
    }
  }
  return false;
}

// ---------------------------------------------------------------------------------------------------------
// heatmap

export interface BlockAverage {
  /** my rows × mx columns, row-major, row 0 = lowest y. NaN where a block holds no finite value. */
  values: Float64Array;
  mx: number;
  my: number;
  fx: number;
  fy: number;
}

/**
 * Block average (box-filter downsampling) of z (ny rows of nx): block factors fx = ⌈nx/maxX⌉, fy = ⌈ny/maxY⌉;
 * cell (j, i) is the mean of the finite z values in rows j·fy…min(ny, (j+1)·fy)−1 and columns
 * i·fx…min(nx, (i+1)·fx)−1 (edge blocks may be partial). Common practice for display decimation.
 */
export function blockAverage(z: readonly Float64Array[], nx: number, maxX: number, maxY: number): BlockAverage {
  const ny = z.length;
  const fx = Math.max(1, Math.ceil(nx / maxX));
  const fy = Math.max(1, Math.ceil(ny / maxY));
  const mx = Math.ceil(nx / fx);
  const my = Math.ceil(ny / fy);
  const sum = new Float64Array(mx * my);
  const cnt = new Uint32Array(mx * my);
  for (let r = 0; r < ny; r++) {
    const row = z[r];
    const base = Math.floor(r / fy) * mx;
    for (let i = 0; i < nx; i++) {
      const v = row[i];
      if (Number.isFinite(v)) {
        const k = base + Math.floor(i / fx);
        sum[k] += v;
        cnt[k]++;
      }
    }
  }
  const values = new Float64Array(mx * my);
  for (let k = 0; k < values.length; k++) values[k] = cnt[k] > 0 ? sum[k] / cnt[k] : NaN;
  return { values, mx, my, fx, fy };
}

function uniformStep(key: string, a: Float64Array): number {
  if (!(a instanceof Float64Array) || a.length < 2) {
    throw new UserError(`${key} must be a Float64Array with at least 2 values, got length ${a?.length}`);
  }
  const n = a.length;
  for (let i = 0; i < n; i++) if (!Number.isFinite(a[i])) throw new UserError(`${key}[${i}] = ${a[i]}; coordinates must be finite`);
  const d = (a[n - 1] - a[0]) / (n - 1);
  if (!(d > 0)) throw new UserError(`${key} must be increasing, got ${a[0]} … ${a[n - 1]}`);
  for (let i = 1; i < n; i++) {
    if (Math.abs(a[i] - a[i - 1] - d) > GRID_UNIFORM_RTOL * d) {
      throw new UserError(`${key} must be a uniform grid (step ${d}); step ${i - 1}→${i} is ${a[i] - a[i - 1]}`);
    }
  }
  return d;
}

/**
 * Heatmap z(x, y) with a vertical colour bar (viridis) and optional line overlays (e.g. predicted soliton
 * trajectories, drawn with a white halo, split at non-finite points). The data are block-averaged to at most
 * maxCells and embedded as one PNG <image> (class "cells", with data-cells, data-block, data-zmin/zmax,
 * data-nonfinite-cells). Coordinates are cell centres on uniform grids.
 */
export function heatmap(opts: HeatmapOptions): string {
  const width = checkWidth('heatmap.width', opts.width);
  const xLabel = checkLabel('heatmap.xLabel', opts.xLabel);
  const yLabel = checkLabel('heatmap.yLabel', opts.yLabel);
  const zLabel = checkLabel('heatmap.zLabel', opts.zLabel);
  const dx = uniformStep('heatmap.x', opts.x);
  const dy = uniformStep('heatmap.y', opts.y);
  const nx = opts.x.length;
  const ny = opts.y.length;
  if (!Array.isArray(opts.z) || opts.z.length !== ny) {
    throw new UserError(`heatmap.z must hold one row per y value (${ny} rows), got ${Array.isArray(opts.z) ? opts.z.length : typeof opts.z}`);
  }
  opts.z.forEach((row, j) => {
    if (!row || row.length !== nx) throw new UserError(`heatmap.z[${j}] has ${row?.length} values; expected ${nx} (length of heatmap.x)`);
  });
  const cap = opts.maxCells ?? DEFAULT_MAX_CELLS;
  if (!(Number.isInteger(cap.x) && cap.x >= 1 && Number.isInteger(cap.y) && cap.y >= 1 && cap.x * cap.y <= MAX_TOTAL_CELLS)) {
    throw new UserError(`heatmap.maxCells must be positive integers with x·y ≤ ${MAX_TOTAL_CELLS}, got ${JSON.stringify(cap)}`);
  }
  const ba = blockAverage(opts.z, nx, cap.x, cap.y);
  let zlo = Infinity;
  let zhi = -Infinity;
  let nonfinite = 0;
  for (const v of ba.values) {
    if (Number.isNaN(v)) nonfinite++;
    else {
      if (v < zlo) zlo = v;
      if (v > zhi) zhi = v;
    }
  }
  if (opts.zRange) {
    const [a, b] = opts.zRange;
    if (!(Number.isFinite(a) && Number.isFinite(b) && a < b)) throw new UserError(`heatmap.zRange must be [lo, hi] with lo < hi, got ${JSON.stringify(opts.zRange)}`);
    zlo = a;
    zhi = b;
  } else if (!(zlo <= zhi)) {
    zlo = 0;
    zhi = 1;
  } else if (zlo === zhi) {
    const d = zlo === 0 ? 1 : Math.abs(zlo) * 0.05;
    zlo -= d;
    zhi += d;
  }

  // colour the cells: PNG row 0 is the top (highest y) row
  const lut = viridisLut(LUT_SIZE);
  const rgba = new Uint8Array(ba.mx * ba.my * 4);
  const span = zhi - zlo;
  for (let j = 0; j < ba.my; j++) {
    const src = (ba.my - 1 - j) * ba.mx;
    for (let i = 0; i < ba.mx; i++) {
      const v = ba.values[src + i];
      const o = (j * ba.mx + i) * 4;
      if (Number.isNaN(v)) continue; // transparent
      const t = Math.min(1, Math.max(0, (v - zlo) / span));
      const e = Math.round(t * (LUT_SIZE - 1)) * 3;
      rgba[o] = lut[e];
      rgba[o + 1] = lut[e + 1];
      rgba[o + 2] = lut[e + 2];
      rgba[o + 3] = 255;
    }
  }
  const png = encodePngRgba(ba.mx, ba.my, rgba);

  const W = mmToPx(figureWidthMm(width));
  const H0 = mmToPx(checkHeight('heatmap.heightMm', opts.heightMm, width));
  const c = createCanvas(W, 'heatmap');
  const top = titleHeight(opts.title);
  const bottom = bottomAxisHeight();
  const plotH = H0 - top - bottom;
  const xlo = opts.x[0] - dx / 2;
  const xhi = opts.x[nx - 1] + dx / 2;
  const ylo = opts.y[0] - dy / 2;
  const yhi = opts.y[ny - 1] + dy / 2;
  const yScale = c.d3.scaleLinear().domain([ylo, yhi]).range([top + plotH, top]);
  const yTicks = linearTicks(yScale, plotH);
  const zScale = c.d3.scaleLinear().domain([zlo, zhi]).range([top + plotH, top]);
  const zTicks = linearTicks(zScale, plotH);
  const left = sideAxisWidth(yTicks) + 3;
  const barGap = 6;
  const barW = 8;
  const right = barGap + barW + sideAxisWidth(zTicks) + 3;
  const plot: PlotRect = { left, top, width: W - left - right, height: plotH };
  if (plot.width < 40) throw new UserError(`heatmap: labels leave only ${plot.width.toFixed(0)} px for the plot; use width 'double'`);
  const xScale = c.d3.scaleLinear().domain([xlo, xhi]).range([plot.left, plot.left + plot.width]);
  const xTicks = linearTicks(xScale, plot.width);

  drawTitle(c, opts.title);
  const data = clipGroup(c, plot, 0);
  // image covers whole blocks (the last block may extend past the data; the clip hides that part)
  const imgX0 = xScale(xlo);
  const imgX1 = xScale(xlo + ba.mx * ba.fx * dx);
  const imgYTop = yScale(ylo + ba.my * ba.fy * dy);
  const imgYBot = yScale(ylo);
  const img = data
    .append('image')
    .attr('class', 'cells')
    .attr('data-cells', `${ba.my}x${ba.mx}`)
    .attr('data-block', `${ba.fy}x${ba.fx}`)
    .attr('data-source', `${ny}x${nx}`)
    .attr('data-zmin', dataNum(zlo))
    .attr('data-zmax', dataNum(zhi))
    .attr('data-nonfinite-cells', String(nonfinite))
    .attr('x', px(imgX0))
    .attr('y', px(imgYTop))
    .attr('width', px(imgX1 - imgX0))
    .attr('height', px(imgYBot - imgYTop))
    .attr('preserveAspectRatio', 'none')
    .attr('style', 'image-rendering:optimizeSpeed;image-rendering:crisp-edges;image-rendering:pixelated');
  (img.node() as Element).setAttributeNS(XLINK_NS, 'xlink:href', pngDataUri(png));

  const legend: LegendEntry[] = [];
  (opts.overlays ?? []).forEach((ov, i) => {
    checkLabel(`heatmap.overlays[${i}].name`, ov.name);
    checkXY(`heatmap.overlays[${i}] (${JSON.stringify(ov.name)})`, ov.x, ov.y);
    const ok = (a: number, b: number): boolean => Number.isFinite(a) && Number.isFinite(b);
    const pr = buildPath(ov.x, ov.y, xScale, yScale, ok, plot.width);
    const color = seriesColor(i + 1);
    const dash = seriesDash(i + 1);
    const g = data.append('g').attr('class', 'overlay').attr('data-series', ov.name).attr('data-index', String(i));
    if (pr.points > 0) {
      g.append('path').attr('class', 'halo').attr('d', pr.d).attr('stroke', '#ffffff').attr('stroke-width', px(STROKE.halo)).attr('fill', 'none').attr('stroke-linejoin', 'round');
    }
    const p = g
      .append('path')
      .attr('class', 'overlay-line')
      .attr('data-series', ov.name)
      .attr('data-n', String(ov.x.length))
      .attr('data-points', String(pr.points))
      .attr('data-nonfinite', String(countUnplottable(ov.x, ov.y, ok)))
      .attr('data-segments', String(pr.segments))
      .attr('stroke', color)
      .attr('stroke-width', px(STROKE.overlay))
      .attr('stroke-dasharray', dash)
      .attr('fill', 'none')
      .attr('stroke-linejoin', 'round');
    if (pr.points > 0) {
      p.attr('data-xmin', dataNum(pr.extremes.xmin))
        .attr('data-xmax', dataNum(pr.extremes.xmax))
        .attr('data-ymin', dataNum(pr.extremes.ymin))
        .attr('data-ymax', dataNum(pr.extremes.ymax))
        .attr('d', pr.d);
    }
    legend.push({ name: ov.name, color, dash, kind: 'line', halo: true });
  });
  drawFrame(c, plot);
  drawAxis(c.root, 'bottom', xScale, xTicks, plot, xLabel, 'x', bottomLabelOffset());
  drawAxis(c.root, 'left', yScale, yTicks, plot, yLabel, 'y', sideLabelOffset(yTicks));

  // colour bar: a 1×LUT_SIZE PNG (top = zmax) plus a vector axis
  const barX = plot.left + plot.width + barGap;
  const barRgba = new Uint8Array(LUT_SIZE * 4);
  for (let j = 0; j < LUT_SIZE; j++) {
    const e = (LUT_SIZE - 1 - j) * 3;
    barRgba.set([lut[e], lut[e + 1], lut[e + 2], 255], j * 4);
  }
  const cb = c.root.append('g').attr('class', 'colorbar').attr('data-zmin', dataNum(zlo)).attr('data-zmax', dataNum(zhi)).attr('data-colormap', 'viridis');
  const bimg = cb
    .append('image')
    .attr('x', px(barX))
    .attr('y', px(plot.top))
    .attr('width', px(barW))
    .attr('height', px(plot.height))
    .attr('preserveAspectRatio', 'none');
  (bimg.node() as Element).setAttributeNS(XLINK_NS, 'xlink:href', pngDataUri(encodePngRgba(1, LUT_SIZE, barRgba)));
  cb.append('rect').attr('x', px(barX)).attr('y', px(plot.top)).attr('width', px(barW)).attr('height', px(plot.height)).attr('stroke', '#000000').attr('stroke-width', px(STROKE.axis)).attr('fill', 'none');
  const barPlot: PlotRect = { left: barX, top: plot.top, width: barW, height: plot.height };
  drawAxis(cb, 'right', zScale, zTicks, barPlot, zLabel, 'z', sideLabelOffset(zTicks));

  let H = H0;
  if (legend.length > 0) {
    const grid = legendGridSize(legend, W - plot.left - 4);
    drawLegend(c.root, legend, plot.left, H, grid, grid.cols, grid.colW, 'below', false);
    H += grid.h + 2;
  }
  H += drawAnnotations(c, opts.annotations, plot.left, H, W - plot.left - 4);
  return finish(c, H + 2);
}

// ---------------------------------------------------------------------------------------------------------
// bar chart

/** Factor between the smallest positive bar and the bottom of a log axis (≈ 0.5 decade, common practice). */
const BAR_LOG_HEADROOM = 3;
/** Hatch directions (degrees) per series index so bars also differ in greyscale; null = plain fill. */
const HATCH_ANGLES: readonly (number | null)[] = [null, 45, -45, 0, 90, 22.5, -67.5, 67.5];

/**
 * Grouped bar chart: one group per label along x, one bar per value name inside each group (Okabe–Ito colour
 * plus hatch per name). Linear axes include zero; on a log axis bars start at the bottom of the axis and values
 * ≤ 0 or non-finite are not drawn but listed as <g class="bar-missing" data-reason=…>. Each bar <rect> carries
 * data-group, data-series, data-value.
 */
export function barChart(opts: BarChartOptions): string {
  const width = checkWidth('barChart.width', opts.width ?? 'single');
  const xLabel = checkLabel('barChart.xLabel', opts.xLabel);
  const yLabel = checkLabel('barChart.yLabel', opts.yLabel);
  if (!Array.isArray(opts.groups) || opts.groups.length === 0) {
    throw new UserError(`barChart.groups must be a non-empty list, got ${JSON.stringify(opts.groups?.length ?? opts.groups)}`);
  }
  const logY = opts.logY === true;
  const names: string[] = [];
  for (const [gi, g] of opts.groups.entries()) {
    if (!Array.isArray(g.values)) throw new UserError(`barChart.groups[${gi}].values must be a list of {name, value}`);
    for (const v of g.values) {
      if (typeof v.value !== 'number') throw new UserError(`barChart.groups[${gi}] value ${JSON.stringify(v.name)} must be a number, got ${JSON.stringify(v.value)}`);
      if (!names.includes(v.name)) names.push(v.name);
    }
  }
  const ok = logY ? (v: number): boolean => Number.isFinite(v) && v > 0 : (v: number): boolean => Number.isFinite(v);
  let lo = Infinity;
  let hi = -Infinity;
  for (const g of opts.groups) {
    for (const v of g.values) {
      if (!ok(v.value)) continue;
      lo = Math.min(lo, v.value);
      hi = Math.max(hi, v.value);
    }
  }
  // log bars start at the bottom of the axis: leave at least BAR_LOG_HEADROOM below the smallest bar
  const dom: [number, number] = logY ? logDomain(lo / BAR_LOG_HEADROOM, hi) : linearDomain(Math.min(0, lo <= hi ? lo : 0), Math.max(0, lo <= hi ? hi : 1));

  const W = mmToPx(figureWidthMm(width));
  const H0 = mmToPx(checkHeight('barChart.heightMm', opts.heightMm, width));
  const c = createCanvas(W, 'bar');
  c.root.attr('data-series-count', String(names.length)).attr('data-group-count', String(opts.groups.length)).attr('data-log-y', String(logY));
  const top = titleHeight(opts.title);

  // group label rotation if the labels do not fit their band
  const provisionalBand = (W - 60) / opts.groups.length;
  const maxLabelW = opts.groups.reduce((m, g) => Math.max(m, estimateTextWidthPx(g.label, FONT_PT.tick)), 0);
  const rotate = maxLabelW > provisionalBand - 4;
  const ROT = 35;
  const labelDrop = rotate ? maxLabelW * Math.sin((ROT * Math.PI) / 180) + ptToPx(FONT_PT.tick) : ptToPx(FONT_PT.tick);
  const bottom = bottomAxisHeight() - ptToPx(FONT_PT.tick) + labelDrop;
  const plotH = H0 - top - bottom;
  if (plotH < 30) throw new UserError(`barChart: group labels are too long for the figure height (longest ${JSON.stringify(opts.groups.find((g) => estimateTextWidthPx(g.label, FONT_PT.tick) === maxLabelW)?.label)})`);
  const yScale = makeYScale(c, logY, dom, { left: 0, top, width: 1, height: plotH });
  const yTicks = logY ? logTicks(yScale, plotH) : linearTicks(yScale, plotH);
  const left = sideAxisWidth(yTicks) + 3;
  const plot: PlotRect = { left, top, width: W - left - 8, height: plotH };

  drawTitle(c, opts.title);
  drawAxis(c.root, 'left', yScale, yTicks, plot, yLabel, 'y', sideLabelOffset(yTicks));

  // patterns
  const defs = c.root.append('defs');
  const patternId = (k: number): string => idRef(`hatch-${k}`);
  names.forEach((_, k) => {
    const ang = HATCH_ANGLES[k % HATCH_ANGLES.length];
    if (ang === null) return;
    const p = defs
      .append('pattern')
      .attr('id', patternId(k))
      .attr('patternUnits', 'userSpaceOnUse')
      .attr('width', '4')
      .attr('height', '4')
      .attr('patternTransform', `rotate(${ang})`);
    p.append('path').attr('d', 'M0,0V4').attr('stroke', '#ffffff').attr('stroke-width', '1.2');
  });

  const band = plot.width / opts.groups.length;
  const inner = band * 0.8;
  const barW = inner / Math.max(1, names.length);
  const [d0] = yScale.domain();
  const basePx = logY ? plot.top + plot.height : yScale(0);
  const bars = c.root.append('g').attr('class', 'bars');
  const xAxis = c.root.append('g').attr('class', 'axis').attr('data-axis', 'x');
  const axisY = plot.top + plot.height;
  xAxis.append('path').attr('class', 'domain').attr('d', `M${px(plot.left)},${px(axisY)}H${px(plot.left + plot.width)}`).attr('stroke', '#000000').attr('stroke-width', px(STROKE.axis));
  opts.groups.forEach((g, gi) => {
    const gx = plot.left + gi * band + (band - inner) / 2;
    const cx = plot.left + (gi + 0.5) * band;
    const tg = xAxis.append('g').attr('class', 'tick').attr('data-label', g.label).attr('data-pos', px(cx));
    tg.append('path').attr('d', `M${px(cx)},${px(axisY)}v${px(3.5)}`).attr('stroke', '#000000').attr('stroke-width', px(STROKE.axis));
    const ty = axisY + 3.5 + 2 + ptToPx(FONT_PT.tick) * 0.8;
    if (rotate) addText(tg, g.label, cx, ty, FONT_PT.tick, { anchor: 'end', rotate: -ROT });
    else addText(tg, g.label, cx, ty, FONT_PT.tick, { anchor: 'middle' });
    for (const v of g.values) {
      const k = names.indexOf(v.name);
      const bx = gx + k * barW;
      if (!ok(v.value)) {
        const mg = bars
          .append('g')
          .attr('class', 'bar-missing')
          .attr('data-group', g.label)
          .attr('data-series', v.name)
          .attr('data-reason', Number.isFinite(v.value) ? 'non-positive on log axis' : 'non-finite')
          .attr('data-value', dataNum(v.value));
        addText(mg, 'n/a', bx + barW / 2, basePx - 2, FONT_PT.tick, { anchor: 'middle' });
        continue;
      }
      const vy = yScale(v.value);
      const y0 = Math.min(vy, basePx);
      const h = Math.abs(basePx - vy);
      const color = seriesColor(k);
      bars
        .append('rect')
        .attr('class', 'bar')
        .attr('data-group', g.label)
        .attr('data-series', v.name)
        .attr('data-value', dataNum(v.value))
        .attr('x', px(bx))
        .attr('y', px(y0))
        .attr('width', px(barW * 0.92))
        .attr('height', px(h))
        .attr('fill', color)
        .attr('stroke', '#000000')
        .attr('stroke-width', px(STROKE.grid));
      if (HATCH_ANGLES[k % HATCH_ANGLES.length] !== null) {
        bars.append('rect').attr('class', 'hatch').attr('x', px(bx)).attr('y', px(y0)).attr('width', px(barW * 0.92)).attr('height', px(h)).attr('fill', `url(#${patternId(k)})`).attr('fill-opacity', '0.55');
      }
    }
  });
  addText(xAxis, xLabel, plot.left + plot.width / 2, axisY + 3.5 + 2 + labelDrop + 3 + ptToPx(FONT_PT.label) * 0.8, FONT_PT.label, { anchor: 'middle', cls: 'axis-label' });
  if (!logY && d0 < 0) {
    c.root.append('path').attr('class', 'zero-line').attr('d', `M${px(plot.left)},${px(basePx)}H${px(plot.left + plot.width)}`).attr('stroke', '#000000').attr('stroke-width', px(STROKE.grid));
  }
  drawFrame(c, plot);

  let H = H0;
  if (names.length >= 2) {
    const legend: LegendEntry[] = names.map((nm, k) => ({ name: nm, color: seriesColor(k), dash: '', kind: 'box' }));
    const grid = legendGridSize(legend, W - plot.left - 4);
    drawLegend(c.root, legend, plot.left, H, grid, grid.cols, grid.colW, 'below', false);
    H += grid.h + 2;
  }
  H += drawAnnotations(c, opts.annotations, plot.left, H, W - plot.left - 4);
  return finish(c, H + 2);
}

