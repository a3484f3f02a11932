/**
 * Grouped bar chart primitive as a standalone SVG string (conventions in report/index.ts).
 */
import type { ContinuousScale, D3Selection } from 'd3-node';
import { checkLabel, checkWidth, drawFrame, drawTitle, figureCanvas, finishBelow, linearDomain, logDomain, makeYScale, titleHeight } from './chart-frame.ts';
import type { LegendEntry } from './legend.ts';
import { FONT_PT, STROKE, type FigureSize, type FigureWidth, estimateTextWidthPx, ptToPx, seriesColor } from './style.ts';
import { type Canvas, type PlotRect, addText, bottomAxisHeight, dataNum, drawAxis, idRef, linearTicks, logTicks, px, sideAxisWidth, sideLabelOffset, symlogTicks } from './svg.ts';

/** Factor between the smallest positive bar and the bottom of a log axis (≈ 0.5 decade, common practice). */
const BAR_LOG_HEADROOM = 3;
/**
 * A symmetric-log axis reaches at most this many decades below its largest |value|: smaller values are below
 * double-precision round-off (2.2e-16) relative to it.
 */
const SYMLOG_MAX_DECADES = 16;
/** Hatch directions (degrees) per series index so bars also differ in greyscale; null = plain fill. */
const HATCH_ANGLES: readonly (number | null)[] = [null, 45, -45, 0, 90, 22.5, -67.5, 67.5];
/** rotation of group labels that do not fit their band, degrees */
const LABEL_ROTATION = 35;

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
  /**
   * Symmetric-log y axis with this linear threshold c (a power of ten, e.g. from symlogConstant): bars keep
   * their sign (below the zero line when negative), linear for |value| < c, logarithmic beyond.
   */
  symlogY?: number;
  width?: FigureWidth;
  annotations?: string[];
  heightMm?: number;
  /** paper (default) or slides (style.ts) */
  size?: FigureSize;
}

/** argument checks of barChart (RangeError: a caller's mistake); returns the value names in first-seen order */
function checkBarOptions(opts: BarChartOptions): { width: FigureWidth; xLabel: string; yLabel: string; names: string[] } {
  const width = checkWidth('barChart.width', opts.width ?? 'single');
  const xLabel = checkLabel('barChart.xLabel', opts.xLabel);
  const yLabel = checkLabel('barChart.yLabel', opts.yLabel);
  const k = opts.symlogY;
  if (k !== undefined && (opts.logY === true || !(k > 0 && Number.isFinite(k)))) {
    throw new RangeError(`barChart.symlogY must be a positive finite threshold and excludes logY, got ${JSON.stringify(k)} (logY ${opts.logY === true})`);
  }
  if (!Array.isArray(opts.groups) || opts.groups.length === 0) {
    throw new RangeError(`barChart.groups must be a non-empty list, got ${JSON.stringify(opts.groups?.length ?? opts.groups)}`);
  }
  const names: string[] = [];
  for (const [gi, g] of opts.groups.entries()) {
    if (!Array.isArray(g.values)) throw new RangeError(`barChart.groups[${gi}].values must be a list of {name, value}`);
    for (const v of g.values) {
      if (typeof v.value !== 'number') throw new RangeError(`barChart.groups[${gi}] value ${JSON.stringify(v.name)} must be a number, got ${JSON.stringify(v.value)}`);
      if (!names.includes(v.name)) names.push(v.name);
    }
  }
  return { width, xLabel, yLabel, names };
}

/**
 * Linear threshold c of a symmetric-log axis for these values: the power of ten at or below the smallest
 * non-zero |value|, but at most SYMLOG_MAX_DECADES below the largest (1 when no value is finite and non-zero).
 */
export function symlogConstant(values: readonly number[]): number {
  const mags = values.filter((v) => Number.isFinite(v) && v !== 0).map(Math.abs);
  if (mags.length === 0) return 1;
  const top = Math.ceil(Math.log10(Math.max(...mags)) - 1e-9);
  const bottom = Math.floor(Math.log10(Math.min(...mags)) + 1e-9);
  return Number(`1e${Math.max(bottom, top - SYMLOG_MAX_DECADES)}`); // exact decimal power of ten
}

/**
 * Symmetric-log scale y = sign(v)·log(1 + |v|/c) (the bi-symmetric log transform: Webber, Meas. Sci. Technol. 24,
 * 027001 (2013); d3-scale's scaleSymlog) on a domain widened to whole decades c·10^k on each side that has data.
 */
function symlogScale(c: Canvas, groups: readonly BarGroup[], k: number, range: [number, number]): ContinuousScale {
  let lo = 0;
  let hi = 0;
  for (const g of groups) for (const v of g.values) if (Number.isFinite(v.value)) [lo, hi] = [Math.min(lo, v.value), Math.max(hi, v.value)];
  const decadeEnd = (m: number): number => (m > 0 ? Math.max(k, Math.pow(10, Math.ceil(Math.log10(m) - 1e-9))) : 0);
  const dom: [number, number] = lo === 0 && hi === 0 ? [-k, k] : [-decadeEnd(-lo), decadeEnd(hi)];
  return c.d3.scaleSymlog().constant(k).domain(dom).range(range);
}

/** y domain: includes zero on a linear axis; on a log axis leaves BAR_LOG_HEADROOM below the smallest bar */
function valueDomain(groups: readonly BarGroup[], logY: boolean, ok: (v: number) => boolean): [number, number] {
  let lo = Infinity;
  let hi = -Infinity;
  for (const g of groups) {
    for (const v of g.values) {
      if (!ok(v.value)) continue;
      lo = Math.min(lo, v.value);
      hi = Math.max(hi, v.value);
    }
  }
  return logY ? logDomain(lo / BAR_LOG_HEADROOM, hi) : linearDomain(Math.min(0, lo <= hi ? lo : 0), Math.max(0, lo <= hi ? hi : 1));
}

/** hatch patterns per value name (white strokes over the fill); returns the pattern id of name k */
function defineHatches(root: D3Selection, names: readonly string[]): (k: number) => string {
  const defs = root.append('defs');
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
  return patternId;
}

interface BarGeometry {
  plot: PlotRect;
  yScale: ContinuousScale;
  band: number;
  inner: number;
  barW: number;
  basePx: number;
  axisY: number;
  rotate: boolean;
}

/** one bar, or an "n/a" marker for a value the axis cannot show */
function drawBar(bars: D3Selection, g: BarGroup, v: BarValue, k: number, bx: number, geo: BarGeometry, ok: (v: number) => boolean, patternId: (k: number) => string): void {
  if (!ok(v.value)) {
    const mg = bars
      .append('g')
      .attr('class', 'bar-missing')
      .attr('data-group', g.label)
      .attr('data-series', v.name)
      .attr('data-reason', Number.isFinite(v.value) ? 'non-positive on log axis' : 'non-finite')
      .attr('data-value', dataNum(v.value));
    addText(mg, 'n/a', bx + geo.barW / 2, geo.basePx - 2, FONT_PT.tick, { anchor: 'middle' });
    return;
  }
  const vy = geo.yScale(v.value);
  const y0 = Math.min(vy, geo.basePx);
  const h = Math.abs(geo.basePx - vy);
  bars
    .append('rect')
    .attr('class', 'bar')
    .attr('data-group', g.label)
    .attr('data-series', v.name)
    .attr('data-value', dataNum(v.value))
    .attr('x', px(bx))
    .attr('y', px(y0))
    .attr('width', px(geo.barW * 0.92))
    .attr('height', px(h))
    .attr('fill', seriesColor(k))
    .attr('stroke', '#000000')
    .attr('stroke-width', px(STROKE.grid));
  if (HATCH_ANGLES[k % HATCH_ANGLES.length] !== null) {
    bars.append('rect').attr('class', 'hatch').attr('x', px(bx)).attr('y', px(y0)).attr('width', px(geo.barW * 0.92)).attr('height', px(h)).attr('fill', `url(#${patternId(k)})`).attr('fill-opacity', '0.55');
  }
}

/** the group's tick and label on the x axis, then its bars */
function drawGroup(xAxis: D3Selection, bars: D3Selection, g: BarGroup, gi: number, names: readonly string[], geo: BarGeometry, ok: (v: number) => boolean, patternId: (k: number) => string): void {
  const { plot, band, inner, axisY } = geo;
  const gx = plot.left + gi * band + (band - inner) / 2;
  const cx = plot.left + (gi + 0.5) * band;
  const tg = xAxis.append('g').attr('class', 'tick').attr('data-label', g.label).attr('data-pos', px(cx));
  tg.append('path').attr('d', `M${px(cx)},${px(axisY)}v${px(3.5)}`).attr('stroke', '#000000').attr('stroke-width', px(STROKE.axis));
  const ty = axisY + 3.5 + 2 + ptToPx(FONT_PT.tick) * 0.8;
  if (geo.rotate) addText(tg, g.label, cx, ty, FONT_PT.tick, { anchor: 'end', rotate: -LABEL_ROTATION });
  else addText(tg, g.label, cx, ty, FONT_PT.tick, { anchor: 'middle' });
  for (const v of g.values) {
    const k = names.indexOf(v.name);
    drawBar(bars, g, v, k, gx + k * geo.barW, geo, ok, patternId);
  }
}

/**
 * Grouped bar chart: one group per label along x, one bar per value name inside each group (Okabe–Ito colour
 * plus hatch per name). Linear and symmetric-log axes include zero and bars keep their sign; on a log axis bars
 * start at the bottom of the axis and values ≤ 0 or non-finite are not drawn but listed as
 * <g class="bar-missing" data-reason=…>. Each bar <rect> carries
 * data-group, data-series, data-value.
 */
export function barChart(opts: BarChartOptions): string {
  const { width, xLabel, yLabel, names } = checkBarOptions(opts);
  const logY = opts.logY === true;
  const ok = logY ? (v: number): boolean => Number.isFinite(v) && v > 0 : (v: number): boolean => Number.isFinite(v);
  const dom = valueDomain(opts.groups, logY, ok);
  const symC = opts.symlogY;

  const { c, W, H0 } = figureCanvas('bar', 'barChart', width, opts.heightMm, opts.size);
  c.root.attr('data-series-count', String(names.length)).attr('data-group-count', String(opts.groups.length)).attr('data-log-y', String(logY));
  if (symC !== undefined) c.root.attr('data-symlog-constant', dataNum(symC));
  const top = titleHeight(opts.title);

  // group labels are rotated when they do not fit their band
  const provisionalBand = (W - 60) / opts.groups.length;
  const maxLabelW = opts.groups.reduce((m, g) => Math.max(m, estimateTextWidthPx(g.label, FONT_PT.tick)), 0);
  const rotate = maxLabelW > provisionalBand - 4;
  const labelDrop = rotate ? maxLabelW * Math.sin((LABEL_ROTATION * Math.PI) / 180) + ptToPx(FONT_PT.tick) : ptToPx(FONT_PT.tick);
  const plotH = H0 - top - (bottomAxisHeight() - ptToPx(FONT_PT.tick) + labelDrop);
  if (plotH < 30) throw new RangeError(`barChart: group labels are too long for the figure height (longest ${JSON.stringify(opts.groups.find((g) => estimateTextWidthPx(g.label, FONT_PT.tick) === maxLabelW)?.label)})`);
  const yScale = symC !== undefined ? symlogScale(c, opts.groups, symC, [top + plotH, top]) : makeYScale(c, logY, dom, { left: 0, top, width: 1, height: plotH });
  const yTicks = symC !== undefined ? symlogTicks(yScale, symC) : logY ? logTicks(yScale, plotH) : linearTicks(yScale, plotH);
  const left = sideAxisWidth(yTicks) + 3;
  const plot: PlotRect = { left, top, width: W - left - 8, height: plotH };

  drawTitle(c, opts.title);
  drawAxis(c.root, 'left', yScale, yTicks, plot, yLabel, 'y', sideLabelOffset(yTicks));
  const patternId = defineHatches(c.root, names);

  const band = plot.width / opts.groups.length;
  const inner = band * 0.8;
  const basePx = logY ? plot.top + plot.height : yScale(0);
  const geo: BarGeometry = { plot, yScale, band, inner, barW: inner / Math.max(1, names.length), basePx, axisY: plot.top + plot.height, rotate };
  const bars = c.root.append('g').attr('class', 'bars');
  const xAxis = c.root.append('g').attr('class', 'axis').attr('data-axis', 'x');
  xAxis.append('path').attr('class', 'domain').attr('d', `M${px(plot.left)},${px(geo.axisY)}H${px(plot.left + plot.width)}`).attr('stroke', '#000000').attr('stroke-width', px(STROKE.axis));
  opts.groups.forEach((g, gi) => drawGroup(xAxis, bars, g, gi, names, geo, ok, patternId));
  addText(xAxis, xLabel, plot.left + plot.width / 2, geo.axisY + 3.5 + 2 + labelDrop + 3 + ptToPx(FONT_PT.label) * 0.8, FONT_PT.label, { anchor: 'middle', cls: 'axis-label' });
  if (!logY && yScale.domain()[0] < 0) {
    c.root.append('path').attr('class', 'zero-line').attr('d', `M${px(plot.left)},${px(basePx)}H${px(plot.left + plot.width)}`).attr('stroke', '#000000').attr('stroke-width', px(STROKE.grid));
  }
  drawFrame(c, plot);
  const legend: LegendEntry[] = names.length >= 2 ? names.map((nm, k) => ({ name: nm, color: seriesColor(k), dash: '', kind: 'box' })) : [];
  return finishBelow(c, legend, plot, W, H0, opts.annotations);
}
