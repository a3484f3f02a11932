/**
 * Heat map primitive z(x, y) with a viridis colour bar and optional line overlays, as a standalone SVG string.
 *
 * Cells are embedded as one <image> holding a PNG (encoded in png.ts) rather than as <rect>s: the size is then
 * bounded by the cell cap independent of the data (≤ 4 bytes/cell before compression; a 200×300 cap gives
 * < 330 kB base64 in the worst case), rendering is seam-free (adjacent <rect>s show anti-aliasing hairlines in
 * many viewers), and parsing stays fast. Axes, labels, ticks and colour-bar labels remain vector.
 */
import type { ContinuousScale, D3Selection } from 'd3-node';
import { checkLabel, checkWidth, checkXY, clipGroup, drawFrame, drawTitle, figureCanvas, finishBelow, titleHeight } from './chart-frame.ts';
import type { LegendEntry } from './legend.ts';
import { buildPath, countUnplottable } from './path.ts';
import { encodePngRgba, pngDataUri } from './png.ts';
import { STROKE, type FigureSize, type FigureWidth, seriesColor, seriesDash, viridisLut } from './style.ts';
import { type Canvas, type PlotRect, type Tick, XLINK_NS, bottomAxisHeight, bottomLabelOffset, dataNum, drawAxis, linearTicks, px, sideAxisWidth, sideLabelOffset } from './svg.ts';

/** Default heatmap cell cap (columns along x, rows along y); keeps files far below 2 MB (see module doc). */
export const DEFAULT_MAX_CELLS = { x: 300, y: 200 } as const;
/**
 * Upper limit for a caller's maxCells x·y: even incompressible PNG data (4 bytes/cell, ×4/3 for base64) then
 * stay ≤ 1.6 MB, so any heatmap file is < 2 MB.
 */
export const MAX_TOTAL_CELLS = 300_000;
/** Relative tolerance for "uniform grid" in heatmap coordinates (float round-off of linspace is ~1e-15). */
const GRID_UNIFORM_RTOL = 1e-3;
/** Colour lookup table size for heatmaps (8-bit output cannot resolve more). */
const LUT_SIZE = 256;
/** gap between plot and colour bar, and the bar's width, px */
const BAR_GAP = 6;
const BAR_W = 8;

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
  /** paper (default) or slides (style.ts) */
  size?: FigureSize;
  annotations?: string[];
}

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
    throw new RangeError(`${key} must be a Float64Array with at least 2 values, got length ${a?.length}`);
  }
  const n = a.length;
  for (let i = 0; i < n; i++) if (!Number.isFinite(a[i])) throw new RangeError(`${key}[${i}] = ${a[i]}; coordinates must be finite`);
  const d = (a[n - 1] - a[0]) / (n - 1);
  if (!(d > 0)) throw new RangeError(`${key} must be increasing, got ${a[0]} … ${a[n - 1]}`);
  for (let i = 1; i < n; i++) {
    if (Math.abs(a[i] - a[i - 1] - d) > GRID_UNIFORM_RTOL * d) {
      throw new RangeError(`${key} must be a uniform grid (step ${d}); step ${i - 1}→${i} is ${a[i] - a[i - 1]}`);
    }
  }
  return d;
}

/** argument checks of heatmap (RangeError: a caller's mistake); returns the grid steps and the cell cap */
function checkHeatmapOptions(opts: HeatmapOptions) {
  const width = checkWidth('heatmap.width', opts.width);
  const xLabel = checkLabel('heatmap.xLabel', opts.xLabel);
  const yLabel = checkLabel('heatmap.yLabel', opts.yLabel);
  const zLabel = checkLabel('heatmap.zLabel', opts.zLabel);
  const dx = uniformStep('heatmap.x', opts.x);
  const dy = uniformStep('heatmap.y', opts.y);
  const nx = opts.x.length;
  const ny = opts.y.length;
  if (!Array.isArray(opts.z) || opts.z.length !== ny) {
    throw new RangeError(`heatmap.z must hold one row per y value (${ny} rows), got ${Array.isArray(opts.z) ? opts.z.length : typeof opts.z}`);
  }
  opts.z.forEach((row, j) => {
    if (!row || row.length !== nx) throw new RangeError(`heatmap.z[${j}] has ${row?.length} values; expected ${nx} (length of heatmap.x)`);
  });
  const cap = opts.maxCells ?? DEFAULT_MAX_CELLS;
  if (!(Number.isInteger(cap.x) && cap.x >= 1 && Number.isInteger(cap.y) && cap.y >= 1 && cap.x * cap.y <= MAX_TOTAL_CELLS)) {
    throw new RangeError(`heatmap.maxCells must be positive integers with x·y ≤ ${MAX_TOTAL_CELLS}, got ${JSON.stringify(cap)}`);
  }
  return { width, xLabel, yLabel, zLabel, dx, dy, nx, ny, cap };
}

/** colour-scale range: zRange, else the finite extremes of the cells (widened if flat); and the empty-cell count */
function colourRange(ba: BlockAverage, zRange: [number, number] | undefined): { zlo: number; zhi: number; nonfinite: number } {
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
  if (zRange) {
    const [a, b] = zRange;
    if (!(Number.isFinite(a) && Number.isFinite(b) && a < b)) throw new RangeError(`heatmap.zRange must be [lo, hi] with lo < hi, got ${JSON.stringify(zRange)}`);
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
  return { zlo, zhi, nonfinite };
}

/** RGBA PNG of the cells through the colour table; PNG row 0 is the top (highest y) row, empty cells transparent */
function cellsPng(ba: BlockAverage, zlo: number, zhi: number, lut: Uint8Array): Uint8Array {
  const rgba = new Uint8Array(ba.mx * ba.my * 4);
  const span = zhi - zlo;
  for (let j = 0; j < ba.my; j++) {
    const src = (ba.my - 1 - j) * ba.mx;
    for (let i = 0; i < ba.mx; i++) {
      const v = ba.values[src + i];
      const o = (j * ba.mx + i) * 4;
      if (Number.isNaN(v)) continue;
      const t = Math.min(1, Math.max(0, (v - zlo) / span));
      const e = Math.round(t * (LUT_SIZE - 1)) * 3;
      rgba[o] = lut[e];
      rgba[o + 1] = lut[e + 1];
      rgba[o + 2] = lut[e + 2];
      rgba[o + 3] = 255;
    }
  }
  return encodePngRgba(ba.mx, ba.my, rgba);
}

/** the cell image, covering whole blocks (the last block may extend past the data; the clip hides that part) */
function drawCells(data: D3Selection, ba: BlockAverage, png: Uint8Array, g: { xScale: ContinuousScale; yScale: ContinuousScale; xlo: number; ylo: number; dx: number; dy: number; nx: number; ny: number }, z: { zlo: number; zhi: number; nonfinite: number }): void {
  const imgX0 = g.xScale(g.xlo);
  const imgX1 = g.xScale(g.xlo + ba.mx * ba.fx * g.dx);
  const imgYTop = g.yScale(g.ylo + ba.my * ba.fy * g.dy);
  const imgYBot = g.yScale(g.ylo);
  const img = data
    .append('image')
    .attr('class', 'cells')
    .attr('data-cells', `${ba.my}x${ba.mx}`)
    .attr('data-block', `${ba.fy}x${ba.fx}`)
    .attr('data-source', `${g.ny}x${g.nx}`)
    .attr('data-zmin', dataNum(z.zlo))
    .attr('data-zmax', dataNum(z.zhi))
    .attr('data-nonfinite-cells', String(z.nonfinite))
    .attr('x', px(imgX0))
    .attr('y', px(imgYTop))
    .attr('width', px(imgX1 - imgX0))
    .attr('height', px(imgYBot - imgYTop))
    .attr('preserveAspectRatio', 'none')
    .attr('style', 'image-rendering:optimizeSpeed;image-rendering:crisp-edges;image-rendering:pixelated');
  (img.node() as Element).setAttributeNS(XLINK_NS, 'xlink:href', pngDataUri(png));
}

/** line overlays with a white halo, split at non-finite points; returns their legend entries */
function drawOverlays(data: D3Selection, overlays: readonly HeatmapOverlay[], xScale: ContinuousScale, yScale: ContinuousScale, plot: PlotRect): LegendEntry[] {
  return overlays.map((ov, i) => {
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
    return { name: ov.name, color, dash, kind: 'line', halo: true };
  });
}

/** colour bar right of the plot: a 1×LUT_SIZE PNG (top = zmax) plus a vector axis */
function drawColorbar(c: Canvas, plot: PlotRect, lut: Uint8Array, zScale: ContinuousScale, zTicks: Tick[], zLabel: string, zlo: number, zhi: number): void {
  const barX = plot.left + plot.width + BAR_GAP;
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
    .attr('width', px(BAR_W))
    .attr('height', px(plot.height))
    .attr('preserveAspectRatio', 'none');
  (bimg.node() as Element).setAttributeNS(XLINK_NS, 'xlink:href', pngDataUri(encodePngRgba(1, LUT_SIZE, barRgba)));
  cb.append('rect').attr('x', px(barX)).attr('y', px(plot.top)).attr('width', px(BAR_W)).attr('height', px(plot.height)).attr('stroke', '#000000').attr('stroke-width', px(STROKE.axis)).attr('fill', 'none');
  const barPlot: PlotRect = { left: barX, top: plot.top, width: BAR_W, height: plot.height };
  drawAxis(cb, 'right', zScale, zTicks, barPlot, zLabel, 'z', sideLabelOffset(zTicks));
}

/**
 * Heatmap z(x, y) with a vertical colour bar (viridis) and optional line overlays (e.g. predicted soliton
 * trajectories, drawn with a white halo, split at non-finite points). The data are block-averaged to at most
 * maxCells and embedded as one PNG <image> (class "cells", with data-cells, data-block, data-zmin/zmax,
 * data-nonfinite-cells). Coordinates are cell centres on uniform grids.
 */
export function heatmap(opts: HeatmapOptions): string {
  const { width, xLabel, yLabel, zLabel, dx, dy, nx, ny, cap } = checkHeatmapOptions(opts);
  const ba = blockAverage(opts.z, nx, cap.x, cap.y);
  const zr = colourRange(ba, opts.zRange);
  const lut = viridisLut(LUT_SIZE);
  const png = cellsPng(ba, zr.zlo, zr.zhi, lut);

  const { c, W, H0 } = figureCanvas('heatmap', 'heatmap', width, opts.heightMm, opts.size);
  const top = titleHeight(opts.title);
  const plotH = H0 - top - bottomAxisHeight();
  const xlo = opts.x[0] - dx / 2;
  const xhi = opts.x[nx - 1] + dx / 2;
  const ylo = opts.y[0] - dy / 2;
  const yhi = opts.y[ny - 1] + dy / 2;
  const yScale = c.d3.scaleLinear().domain([ylo, yhi]).range([top + plotH, top]);
  const yTicks = linearTicks(yScale, plotH);
  const zScale = c.d3.scaleLinear().domain([zr.zlo, zr.zhi]).range([top + plotH, top]);
  const zTicks = linearTicks(zScale, plotH);
  const left = sideAxisWidth(yTicks) + 3;
  const right = BAR_GAP + BAR_W + sideAxisWidth(zTicks) + 3;
  const plot: PlotRect = { left, top, width: W - left - right, height: plotH };
  if (plot.width < 40) throw new RangeError(`heatmap: labels leave only ${plot.width.toFixed(0)} px for the plot; use width 'double'`);
  const xScale = c.d3.scaleLinear().domain([xlo, xhi]).range([plot.left, plot.left + plot.width]);
  const xTicks = linearTicks(xScale, plot.width);

  drawTitle(c, opts.title);
  const data = clipGroup(c, plot, 0);
  drawCells(data, ba, png, { xScale, yScale, xlo, ylo, dx, dy, nx, ny }, zr);
  const legend = drawOverlays(data, opts.overlays ?? [], xScale, yScale, plot);
  drawFrame(c, plot);
  drawAxis(c.root, 'bottom', xScale, xTicks, plot, xLabel, 'x', bottomLabelOffset());
  drawAxis(c.root, 'left', yScale, yTicks, plot, yLabel, 'y', sideLabelOffset(yTicks));
  drawColorbar(c, plot, lut, zScale, zTicks, zLabel, zr.zlo, zr.zhi);
  return finishBelow(c, legend, plot, W, H0, opts.annotations);
}
