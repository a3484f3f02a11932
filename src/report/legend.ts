/**
 * Figure legends: one entry per series (line sample or filled box, name), laid out as a box inside the plot or
 * as a grid of equal columns below it.
 */
import type { D3Selection } from 'd3-node';
import { FONT_PT, STROKE, estimateTextWidthPx, ptToPx } from './style.ts';
import { addText, px } from './svg.ts';

export interface LegendEntry {
  name: string;
  color: string;
  dash: string;
  kind: 'line' | 'box';
  marker?: boolean;
  halo?: boolean;
}

const LEGEND_SAMPLE = 18; // px length of the line sample
const LEGEND_PAD = 3; // px padding inside the legend box
const LEGEND_GAP = 4; // px between sample and text, and between columns

export function legendRowHeight(): number {
  return ptToPx(FONT_PT.legend) * 1.35;
}

export function legendEntryWidth(e: LegendEntry): number {
  return LEGEND_SAMPLE + LEGEND_GAP + estimateTextWidthPx(e.name, FONT_PT.legend);
}

/** Size of a one-column legend box. */
export function legendBoxSize(entries: LegendEntry[]): { w: number; h: number } {
  const w = entries.reduce((m, e) => Math.max(m, legendEntryWidth(e)), 0) + 2 * LEGEND_PAD;
  const h = entries.length * legendRowHeight() + 2 * LEGEND_PAD;
  return { w, h };
}

/** Layout for a legend placed outside the plot in rows of equal-width columns that fit `availWidth`. */
export function legendGridSize(entries: LegendEntry[], availWidth: number): { w: number; h: number; cols: number; colW: number } {
  const colW = entries.reduce((m, e) => Math.max(m, legendEntryWidth(e)), 0) + LEGEND_GAP * 2;
  const cols = Math.max(1, Math.min(entries.length, Math.floor((availWidth - 2 * LEGEND_PAD) / colW)));
  const rows = Math.ceil(entries.length / cols);
  return { w: cols * colW + 2 * LEGEND_PAD, h: rows * legendRowHeight() + 2 * LEGEND_PAD, cols, colW };
}

/**
 * Draw a legend at (x, y) (top-left of the box), `cols` columns of width `colW`. The group carries
 * data-x/y/width/height (its box in px) and data-placement.
 */
export function drawLegend(
  parent: D3Selection,
  entries: LegendEntry[],
  x: number,
  y: number,
  box: { w: number; h: number },
  cols: number,
  colW: number,
  placement: string,
  framed: boolean,
): void {
  const g = parent
    .append('g')
    .attr('class', 'legend')
    .attr('data-placement', placement)
    .attr('data-x', px(x))
    .attr('data-y', px(y))
    .attr('data-width', px(box.w))
    .attr('data-height', px(box.h));
  if (framed) {
    g.append('rect')
      .attr('x', px(x))
      .attr('y', px(y))
      .attr('width', px(box.w))
      .attr('height', px(box.h))
      .attr('fill', '#ffffff')
      .attr('fill-opacity', '0.85')
      .attr('stroke', '#bbbbbb')
      .attr('stroke-width', px(STROKE.grid));
  }
  const rh = legendRowHeight();
  entries.forEach((e, i) => {
    const c = i % cols;
    const r = Math.floor(i / cols);
    const ex = x + LEGEND_PAD + c * colW;
    const cy = y + LEGEND_PAD + r * rh + rh / 2;
    const eg = g.append('g').attr('class', 'legend-entry').attr('data-series', e.name);
    if (e.kind === 'line') {
      if (e.halo) {
        eg.append('path')
          .attr('d', `M${px(ex)},${px(cy)}h${px(LEGEND_SAMPLE)}`)
          .attr('stroke', '#ffffff')
          .attr('stroke-width', px(STROKE.halo));
      }
      const p = eg
        .append('path')
        .attr('d', `M${px(ex)},${px(cy)}h${px(LEGEND_SAMPLE)}`)
        .attr('stroke', e.color)
        .attr('stroke-width', px(STROKE.data));
      if (e.dash) p.attr('stroke-dasharray', e.dash);
      if (e.marker) {
        eg.append('circle').attr('cx', px(ex + LEGEND_SAMPLE / 2)).attr('cy', px(cy)).attr('r', '1.8').attr('fill', e.color);
      }
    } else {
      eg.append('rect')
        .attr('x', px(ex + 4))
        .attr('y', px(cy - rh * 0.32))
        .attr('width', px(LEGEND_SAMPLE - 8))
        .attr('height', px(rh * 0.64))
        .attr('fill', e.color)
        .attr('stroke', '#000000')
        .attr('stroke-width', px(STROKE.grid));
    }
    addText(eg, e.name, ex + LEGEND_SAMPLE + LEGEND_GAP, cy + ptToPx(FONT_PT.legend) * 0.35, FONT_PT.legend);
  });
}
