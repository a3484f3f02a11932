/**
 * Layout and argument checks shared by the figure primitives (line chart, heat map, bar chart): title,
 * annotations, y domains and scales, the clipped data group, the plot frame and the legend below a plot.
 * Bad arguments are a caller's programming mistake and throw `RangeError`.
 */
import type { ContinuousScale, D3Selection } from 'd3-node';
import { drawLegend, legendGridSize, type LegendEntry } from './legend.ts';
import { FIGURE_SIZES, FONT_PT, STROKE, type FigureSize, type FigureWidth, defaultHeightMm, estimateTextWidthPx, figureLayoutPx, isFigureSize, ptToPx, seriesDash } from './style.ts';
import { type Canvas, type PlotRect, addText, createCanvas, finish, idRef, px } from './svg.ts';

/** Fraction of the y span added above and below the data in line charts (matplotlib's default is 5 %). */
const Y_MARGIN = 0.04;

export function titleHeight(title: string | undefined): number {
  return title ? ptToPx(FONT_PT.title) * 1.6 + 2 : 6;
}

export function drawTitle(c: Canvas, title: string | undefined): void {
  if (title) addText(c.root, title, c.widthPx / 2, ptToPx(FONT_PT.title) * 1.15, FONT_PT.title, { anchor: 'middle', cls: 'title' });
}

/** Greedy word wrap using the estimated glyph width. */
export function wrapText(text: string, fontPt: number, maxWidth: number): string[] {
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
export function drawAnnotations(c: Canvas, notes: string[] | undefined, x: number, y: number, maxWidth: number): number {
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

export function checkLabel(key: string, v: unknown): string {
  if (typeof v !== 'string') throw new RangeError(`${key} must be a string, got ${JSON.stringify(v)}`);
  return v;
}

export function checkWidth(key: string, w: unknown): FigureWidth {
  if (w !== 'single' && w !== 'double') throw new RangeError(`${key} must be 'single' or 'double', got ${JSON.stringify(w)}`);
  return w;
}

export function checkHeight(key: string, h: number | undefined, width: FigureWidth): number {
  if (h === undefined) return defaultHeightMm(width);
  if (!Number.isFinite(h) || h < 20 || h > 250) throw new RangeError(`${key} must be a number of mm in [20, 250], got ${h}`);
  return h;
}

/**
 * The canvas of a figure after the checks of its size options: width W and plot-block height H0 in viewBox px
 * (style.ts figureLayoutPx; heightMm is printed mm, the default is the size's own).
 */
export function figureCanvas(kind: string, key: string, width: FigureWidth, heightMm: number | undefined, size: FigureSize | undefined): { c: Canvas; W: number; H0: number } {
  const s = size ?? 'paper';
  if (!isFigureSize(s)) throw new RangeError(`${key}.size must be one of ${FIGURE_SIZES.join(', ')}, got ${JSON.stringify(s)}`);
  const h = heightMm === undefined ? undefined : checkHeight(`${key}.heightMm`, heightMm, width);
  const { widthPx, heightPx } = figureLayoutPx(s, width, h);
  return { c: createCanvas(widthPx, kind, s), W: widthPx, H0: heightPx };
}

/** Padded domain for a range of finite values (lo ≤ hi), widened if degenerate; linear axes. */
export function linearDomain(lo: number, hi: number): [number, number] {
  if (!(lo <= hi)) return [0, 1];
  if (lo === hi) {
    const d = lo === 0 ? 1 : Math.abs(lo) * 0.05;
    return [lo - d, hi + d];
  }
  return [lo, hi];
}

export function logDomain(lo: number, hi: number): [number, number] {
  if (!(lo <= hi) || !(lo > 0)) return [1, 10];
  if (lo === hi) return [lo / 10, hi * 10];
  return [lo, hi];
}

/** Widen a linear y domain by Y_MARGIN of its span on each side so data do not touch the frame. */
export function padDomain(d: [number, number], log: boolean): [number, number] {
  // log axes are extended to whole decades by nice() anyway; padding would add an empty decade
  if (log) return d;
  const m = (d[1] - d[0]) * Y_MARGIN;
  return [d[0] - m, d[1] + m];
}

export function makeYScale(c: Canvas, log: boolean, dom: [number, number], plot: PlotRect): ContinuousScale {
  const s = (log ? c.d3.scaleLog() : c.d3.scaleLinear()).domain(dom).range([plot.top + plot.height, plot.top]);
  return s.nice();
}

export function clipGroup(c: Canvas, plot: PlotRect, pad: number): D3Selection {
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

export function drawFrame(c: Canvas, plot: PlotRect): void {
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

export function seriesDashFor(i: number, dashed: boolean | undefined): string {
  if (dashed === false) return '';
  const auto = seriesDash(i);
  if (dashed === true && auto === '') return seriesDash(1);
  return auto;
}

export function checkXY(key: string, x: ArrayLike<number>, y: ArrayLike<number>): void {
  if (!x || !y || typeof x.length !== 'number' || typeof y.length !== 'number') {
    throw new RangeError(`${key}: x and y must be arrays of numbers`);
  }
  if (x.length !== y.length) {
    throw new RangeError(`${key}: x has ${x.length} values but y has ${y.length}; they must have the same length`);
  }
}
/** Legend grid below the plot (when there are entries) and the annotations; returns the finished SVG. */
export function finishBelow(c: Canvas, legend: LegendEntry[], plot: PlotRect, W: number, H0: number, annotations: string[] | undefined): string {
  let H = H0;
  if (legend.length > 0) {
    const grid = legendGridSize(legend, W - plot.left - 4);
    drawLegend(c.root, legend, plot.left, H, grid, grid.cols, grid.colW, 'below', false);
    H += grid.h + 2;
  }
  H += drawAnnotations(c, annotations, plot.left, H, W - plot.left - 4);
  return finish(c, H + 2);
}
