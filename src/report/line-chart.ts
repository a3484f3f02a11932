/**
 * Line chart primitive: one or more series y(x) as a standalone SVG string (conventions in report/index.ts).
 */
import type { ContinuousScale, D3Selection } from 'd3-node';
import {
  checkLabel,
  checkWidth,
  checkXY,
  clipGroup,
  drawAnnotations,
  drawFrame,
  drawTitle,
  figureCanvas,
  linearDomain,
  logDomain,
  makeYScale,
  padDomain,
  seriesDashFor,
  titleHeight,
} from './chart-frame.ts';
import { drawLegend, legendBoxSize, legendGridSize, type LegendEntry } from './legend.ts';
import { anySegmentHits, buildPath, countUnplottable } from './path.ts';
import { STROKE, type FigureSize, type FigureWidth, seriesColor } from './style.ts';
import {
  type Canvas,
  type PlotRect,
  type Tick,
  bottomAxisHeight,
  bottomLabelOffset,
  dataNum,
  drawAxis,
  finish,
  linearTicks,
  logTicks,
  px,
  sideAxisWidth,
  sideLabelOffset,
  tickLabelWidth,
} from './svg.ts';

/** At most this many markers per series; denser series get every k-th point marked (legibility, common practice). */
export const MAX_MARKERS = 60;
/** Marker radius in px (≈ 0.5 mm). */
const MARKER_R = 1.8;
/** Inset of an in-plot legend from the plot frame, px. */
const LEGEND_INSET = 4;
/** Extra clearance around an in-plot legend when testing it against data, px (stroke half-width + markers). */
const LEGEND_CLEARANCE = 2.5;

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
  /** logarithmic x axis (points with x ≤ 0 are not drawn) */
  logX?: boolean;
  width: FigureWidth;
  annotations?: string[];
  /** Plot-block height in mm (legend outside / annotations add to it); default from style.ts. */
  heightMm?: number;
  /** paper (default) or slides (style.ts) */
  size?: FigureSize;
}

type Plottable = (xv: number, yv: number) => boolean;

interface Extent {
  xmin: number;
  xmax: number;
  ymin: number;
  ymax: number;
}

/** data extremes over the plottable points of all series */
function seriesExtent(series: readonly LineSeries[], plottable: Plottable): Extent {
  const e = { xmin: Infinity, xmax: -Infinity, ymin: Infinity, ymax: -Infinity };
  for (const s of series) {
    const n = s.x.length;
    for (let i = 0; i < n; i++) {
      const xv = s.x[i];
      const yv = s.y[i];
      if (!plottable(xv, yv)) continue;
      if (xv < e.xmin) e.xmin = xv;
      if (xv > e.xmax) e.xmax = xv;
      if (yv < e.ymin) e.ymin = yv;
      if (yv > e.ymax) e.ymax = yv;
    }
  }
  return e;
}

/** Plot rectangle, scales and ticks: y ticks first (their label widths set the left margin). */
function layoutAxes(c: Canvas, e: Extent, log: { x: boolean; y: boolean }, W: number, top: number, plotH: number) {
  const yScale = makeYScale(c, log.y, padDomain(log.y ? logDomain(e.ymin, e.ymax) : linearDomain(e.ymin, e.ymax), log.y), { left: 0, top, width: 1, height: plotH });
  const yTicks = log.y ? logTicks(yScale, plotH) : linearTicks(yScale, plotH);
  const left = sideAxisWidth(yTicks) + 3;
  const xScaleOver = (from: number, to: number): ContinuousScale =>
    (log.x ? c.d3.scaleLog().domain(logDomain(e.xmin, e.xmax)) : c.d3.scaleLinear().domain(linearDomain(e.xmin, e.xmax))).range([from, to]).nice();
  const xTicksOf = (s: ContinuousScale, length: number): Tick[] => (log.x ? logTicks(s, length) : linearTicks(s, length));
  const lastXLabel = xTicksOf(xScaleOver(0, W - left), W - left).filter((t) => t.label).at(-1)?.label ?? '';
  const right = Math.max(8, tickLabelWidth(lastXLabel) / 2 + 3);
  const plot: PlotRect = { left, top, width: W - left - right, height: plotH };
  const xScale = xScaleOver(plot.left, plot.left + plot.width);
  const xTicks = xTicksOf(xScale, plot.width);
  return { plot, xScale, xTicks, yScale, yTicks };
}

/** Markers of one series (every stride-th plottable point); returns their pixel extents for legend placement. */
function drawMarkers(g: D3Selection, s: LineSeries, color: string, plottable: Plottable, xScale: ContinuousScale, yScale: ContinuousScale): number[] {
  const finite: number[] = [];
  for (let k = 0; k < s.x.length; k++) if (plottable(s.x[k], s.y[k])) finite.push(k);
  const stride = Math.max(1, Math.ceil(finite.length / MAX_MARKERS));
  const mg = g.append('g').attr('class', 'markers').attr('data-series', s.name).attr('data-stride', String(stride)).attr('fill', color);
  const ms: number[] = [];
  for (let k = 0; k < finite.length; k += stride) {
    const X = xScale(s.x[finite[k]]);
    const Y = yScale(s.y[finite[k]]);
    mg.append('circle').attr('cx', px(X)).attr('cy', px(Y)).attr('r', px(MARKER_R));
    ms.push(X - MARKER_R, Y, X + MARKER_R, Y, X, Y - MARKER_R, X, Y + MARKER_R);
  }
  return ms;
}

/** One series path (and markers) into `data`; pushes its pixel segments to allSegs and returns its legend entry. */
function drawSeries(data: D3Selection, s: LineSeries, i: number, plot: PlotRect, xScale: ContinuousScale, yScale: ContinuousScale, plottable: Plottable, allSegs: number[][]): LegendEntry {
  const color = seriesColor(i);
  const dash = seriesDashFor(i, s.dashed);
  const pr = buildPath(s.x, s.y, xScale, yScale, plottable, plot.width);
  const g = data.append('g').attr('class', 'series').attr('data-series', s.name).attr('data-index', String(i));
  const path = g
    .append('path')
    .attr('class', 'series-line')
    .attr('data-series', s.name)
    .attr('data-index', String(i))
    .attr('data-n', String(s.x.length))
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
  if (s.markers) allSegs.push(drawMarkers(g, s, color, plottable, xScale, yScale));
  return { name: s.name, color, dash, kind: 'line', marker: s.markers === true };
}

/**
 * Legend in the first plot corner (top-right, top-left, bottom-right, bottom-left) whose box no data segment
 * crosses, else below the plot; returns the figure height after it.
 */
function placeLegend(c: Canvas, legend: LegendEntry[], plot: PlotRect, allSegs: number[][], W: number, H: number): number {
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
    return H;
  }
  const grid = legendGridSize(legend, W - plot.left - 4);
  drawLegend(c.root, legend, plot.left, H, grid, grid.cols, grid.colW, 'below', false);
  return H + grid.h + 2;
}

/** argument checks of lineChart (RangeError: a caller's mistake) */
function checkLineOptions(opts: LineChartOptions): { width: FigureWidth; xLabel: string; yLabel: string } {
  const width = checkWidth('lineChart.width', opts.width);
  const xLabel = checkLabel('lineChart.xLabel', opts.xLabel);
  const yLabel = checkLabel('lineChart.yLabel', opts.yLabel);
  if (!Array.isArray(opts.series) || opts.series.length === 0) {
    throw new RangeError(`lineChart.series must be a non-empty list of series, got ${JSON.stringify(opts.series?.length ?? opts.series)}`);
  }
  opts.series.forEach((s, i) => {
    checkLabel(`lineChart.series[${i}].name`, s.name);
    checkXY(`lineChart.series[${i}] (${JSON.stringify(s.name)})`, s.x, s.y);
  });
  return { width, xLabel, yLabel };
}

/**
 * Line chart of one or more series y(x). Series are told apart by Okabe–Ito colour and by dash pattern.
 * The legend goes into the first plot corner (top-right, top-left, bottom-right, bottom-left) whose box no data
 * segment crosses; if there is none, it goes below the plot. Each series path carries data-series,
 * data-index, data-n, data-points, data-nonfinite, data-segments, data-xmin/xmax/ymin/ymax and data-decimated.
 */
export function lineChart(opts: LineChartOptions): string {
  const { width, xLabel, yLabel } = checkLineOptions(opts);
  const logY = opts.logY === true;
  const logX = opts.logX === true;
  const plottable: Plottable = (xv: number, yv: number): boolean => Number.isFinite(xv) && Number.isFinite(yv) && (!logY || yv > 0) && (!logX || xv > 0);
  const extent = seriesExtent(opts.series, plottable);

  const { c, W, H0 } = figureCanvas('line', 'lineChart', width, opts.heightMm, opts.size);
  c.root.attr('data-series-count', String(opts.series.length)).attr('data-log-y', String(logY)).attr('data-log-x', String(logX));
  if (!(extent.xmin <= extent.xmax)) c.root.attr('data-empty', 'true');

  const top = titleHeight(opts.title);
  const { plot, xScale, xTicks, yScale, yTicks } = layoutAxes(c, extent, { x: logX, y: logY }, W, top, H0 - top - bottomAxisHeight());
  drawTitle(c, opts.title);
  drawAxis(c.root, 'bottom', xScale, xTicks, plot, xLabel, 'x', bottomLabelOffset());
  drawAxis(c.root, 'left', yScale, yTicks, plot, yLabel, 'y', sideLabelOffset(yTicks));

  const data = clipGroup(c, plot, 3);
  const allSegs: number[][] = [];
  const legend = opts.series.map((s, i) => drawSeries(data, s, i, plot, xScale, yScale, plottable, allSegs));
  drawFrame(c, plot);

  let H = H0;
  if (opts.series.length >= 2) H = placeLegend(c, legend, plot, allSegs, W, H);
  H += drawAnnotations(c, opts.annotations, plot.left, H, W - plot.left - 4);
  return finish(c, H + 2);
}
