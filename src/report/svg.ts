/**
 * Internal SVG building blocks shared by the figure primitives: document set-up on d3-node's jsdom, safe number
 * formatting (never "NaN"/"Infinity"), axes with d3 scales, text and serialisation to a standalone SVG string.
 */
import { D3Node } from 'd3-node';
import type { ContinuousScale, D3Module, D3Selection } from 'd3-node';
import { FONT_FAMILY, FONT_PT, STROKE, type FigureSize, estimateTextWidthPx, mmPerPx, ptToPx } from './style.ts';

export const SVG_NS = 'http://www.w3.org/2000/svg';
export const XLINK_NS = 'http://www.w3.org/1999/xlink';
export const XMLNS_NS = 'http://www.w3.org/2000/xmlns/';

/** Pixel coordinates are written with 2 decimals: 0.01 px ≈ 2.6 µm on paper, far below print resolution. */
const PX_DECIMALS = 2;
/** Tick length in px (≈ 0.9 mm, common practice). */
export const TICK_LEN = 3.5;
/** Gap between tick and its label, px. */
export const TICK_GAP = 2;
/** Placeholder replaced by a content hash so that ids stay unique when several SVGs are inlined in one page. */
const ID_PLACEHOLDER = '__ISOTRAP_ID__';

/** Format a pixel coordinate; throws on non-finite values so that NaN/Infinity can never reach the SVG. */
export function px(v: number): string {
  if (!Number.isFinite(v)) throw new RangeError(`non-finite coordinate ${v}`);
  const r = Number(v.toFixed(PX_DECIMALS));
  return String(Object.is(r, -0) ? 0 : r);
}

/** Format a data value for a data-* attribute: shortest round-trip decimal, or a word for non-finite values. */
export function dataNum(v: number): string {
  if (Number.isNaN(v)) return 'missing';
  if (v === Infinity) return 'inf';
  if (v === -Infinity) return '-inf';
  return String(v);
}

export interface Canvas {
  readonly dn: D3Node;
  readonly d3: D3Module;
  readonly root: D3Selection;
  readonly widthPx: number;
  readonly heightPx: number;
  /** printed mm per viewBox px (style.ts mmPerPx of the figure size) */
  readonly mmPerPx: number;
}

/**
 * Create an SVG root whose viewBox is in px at 96 dpi (magnified for slides, style.ts); width/height attributes
 * are set in mm by `finish` (height may grow while laying out legends and annotations).
 */
export function createCanvas(widthPx: number, kind: string, size: FigureSize = 'paper'): Canvas {
  const dn = new D3Node();
  const root = dn.d3Element.append('svg');
  const el = root.node() as Element;
  el.setAttributeNS(XMLNS_NS, 'xmlns:xlink', XLINK_NS);
  root
    .attr('data-figure', kind)
    .attr('data-figure-size', size)
    .attr('font-family', FONT_FAMILY)
    .attr('font-size', fontPx(FONT_PT.tick))
    .attr('fill', 'none')
    .attr('stroke', 'none');
  return { dn, d3: dn.d3, root, widthPx, heightPx: 0, mmPerPx: mmPerPx(size) };
}

/** FNV-1a 32-bit hash (Fowler, Noll & Vo; public-domain reference), used only to derive unique ids. */
function fnv1a(s: string): string {
  let h = 0x811c9dc5;
  for (let i = 0; i < s.length; i++) {
    h ^= s.charCodeAt(i);
    h = Math.imul(h, 0x01000193);
  }
  return (h >>> 0).toString(16).padStart(8, '0');
}

/** Unique-id placeholder: `idRef('clip')` → an id string to use in attributes, replaced in `finish`. */
export function idRef(name: string): string {
  return `${ID_PLACEHOLDER}-${name}`;
}

/** Set final size, add a white background, serialise as XML and replace id placeholders with a content hash. */
export function finish(c: Canvas, heightPx: number): string {
  const el = c.root.node() as Element;
  c.root
    .attr('viewBox', `0 0 ${px(c.widthPx)} ${px(heightPx)}`)
    .attr('width', `${px(c.widthPx * c.mmPerPx)}mm`)
    .attr('height', `${px(heightPx * c.mmPerPx)}mm`);
  const bg = c.dn.document.createElementNS(SVG_NS, 'rect');
  bg.setAttribute('class', 'background');
  bg.setAttribute('width', px(c.widthPx));
  bg.setAttribute('height', px(heightPx));
  bg.setAttribute('fill', '#ffffff');
  el.insertBefore(bg, el.firstChild);
  const text = new c.dn.window.XMLSerializer().serializeToString(el);
  const id = `isotrap-${fnv1a(text)}`;
  return text.split(ID_PLACEHOLDER).join(id);
}

/** Font size attribute: rounded *up* to 2 decimals so the printed size never drops below the nominal pt. */
export function fontPx(pt: number): string {
  return String(Math.ceil(ptToPx(pt) * 10 ** PX_DECIMALS - 1e-9) / 10 ** PX_DECIMALS);
}

export function addText(
  parent: D3Selection,
  text: string,
  x: number,
  y: number,
  fontPt: number,
  opts: { anchor?: 'start' | 'middle' | 'end'; rotate?: number; cls?: string; baseline?: 'auto' | 'middle' | 'hanging' } = {},
): D3Selection {
  const t = parent
    .append('text')
    .attr('x', px(x))
    .attr('y', px(y))
    .attr('font-size', fontPx(fontPt))
    .attr('fill', '#000000')
    .attr('text-anchor', opts.anchor ?? 'start');
  if (opts.baseline && opts.baseline !== 'auto') t.attr('dominant-baseline', opts.baseline);
  if (opts.rotate) t.attr('transform', `rotate(${opts.rotate} ${px(x)} ${px(y)})`);
  if (opts.cls) t.attr('class', opts.cls);
  t.text(text);
  return t;
}

export interface PlotRect {
  left: number;
  top: number;
  width: number;
  height: number;
}

export interface Tick {
  value: number;
  label: string; // plain-text form (exponents written as "10^-3")
  major: boolean;
}

/** Target spacing between major ticks in px (≈ 12 mm, common practice). */
const TICK_SPACING_PX = 45;

/** Ticks for a linear scale via d3-scale's ticks()/tickFormat() (d3 "nice" 1-2-5 steps). */
export function linearTicks(scale: ContinuousScale, lengthPx: number): Tick[] {
  const n = Math.max(2, Math.round(lengthPx / TICK_SPACING_PX));
  const fmt = scale.tickFormat(n);
  return scale.ticks(n).map((v) => ({ value: v, label: fmt(v), major: true }));
}

/**
 * Ticks for a log10 scale: majors at integer powers of ten (every k-th decade if many), minors at 2…9·10^k when
 * the range spans few decades. If the domain spans less than one decade, falls back to d3's log ticks.
 */
export function logTicks(scale: ContinuousScale, lengthPx: number): Tick[] {
  const [a, b] = scale.domain();
  const lo = Math.min(a, b);
  const hi = Math.max(a, b);
  const e0 = Math.ceil(Math.log10(lo) - 1e-9);
  const e1 = Math.floor(Math.log10(hi) + 1e-9);
  if (e1 - e0 < 1) {
    const n = Math.max(2, Math.round(lengthPx / TICK_SPACING_PX));
    const fmt = scale.tickFormat(n, '~g');
    return scale
      .ticks(n)
      .map((v) => ({ value: v, label: fmt(v), major: fmt(v) !== '' }))
      .filter((t) => t.major);
  }
  const decades = e1 - e0;
  const maxMajors = Math.max(2, Math.floor(lengthPx / (TICK_SPACING_PX * 0.6)));
  const step = Math.max(1, Math.ceil((decades + 1) / maxMajors));
  const ticks: Tick[] = [];
  for (let e = e0; e <= e1; e++) {
    const v = Math.pow(10, e);
    if ((e - e0) % step === 0) ticks.push({ value: v, label: `10^${e}`, major: true });
    else ticks.push({ value: v, label: '', major: false });
  }
  if (step === 1 && decades <= 6) {
    for (let e = e0 - 1; e <= e1; e++) {
      for (let m = 2; m <= 9; m++) {
        const v = m * Math.pow(10, e);
        if (v >= lo * (1 - 1e-12) && v <= hi * (1 + 1e-12)) ticks.push({ value: v, label: '', major: false });
      }
    }
  }
  return ticks.sort((p, q) => p.value - q.value);
}

/** Least distance between labelled ticks of a symmetric-log axis, in tick-label heights (legibility; common practice). */
const SYMLOG_LABEL_GAP = 1.6;

/**
 * Ticks of a symmetric-log axis with linear threshold c (a power of ten): 0 and ±c·10^k out to the domain ends;
 * going out from 0, a decade is labelled when it lies SYMLOG_LABEL_GAP label heights from the last label, the
 * others are minor ticks.
 */
export function symlogTicks(scale: ContinuousScale, c: number): Tick[] {
  const [a, b] = scale.domain();
  const ec = Math.round(Math.log10(c));
  const gap = SYMLOG_LABEL_GAP * ptToPx(FONT_PT.tick);
  const ticks: Tick[] = [{ value: 0, label: '0', major: true }];
  for (const sign of [1, -1]) {
    const end = Math.max(sign * a, sign * b);
    let last = scale(0);
    for (let e = ec; end > 0 && Number(`1e${e}`) <= end * (1 + 1e-12); e++) {
      const v = sign * Number(`1e${e}`);
      const major = Math.abs(scale(v) - last) >= gap;
      if (major) last = scale(v);
      ticks.push({ value: v, label: major ? `${sign < 0 ? '-' : ''}10^${e}` : '', major });
    }
  }
  return ticks.sort((p, q) => p.value - q.value);
}

/** Write a tick label; "10^e" (or "-10^e") becomes 10 with a superscript exponent (tspan), with real minus signs. */
function writeTickLabel(t: D3Selection, label: string): void {
  const m = /^(-?)10\^(-?\d+)$/.exec(label);
  if (!m) {
    t.text(label.replace(/^-/, '\u2212'));
    return;
  }
  t.text(m[1] ? '\u221210' : '10');
  const exp = m[2].replace('-', '\u2212');
  t.append('tspan')
    .attr('dy', px(-ptToPx(FONT_PT.tick) * 0.4))
    .attr('font-size', fontPx(FONT_PT.tick))
    .text(exp);
}

/** Estimated width of a formatted tick label in px. */
export function tickLabelWidth(label: string): number {
  const m = /^(-?)10\^(-?\d+)$/.exec(label);
  const chars = m ? m[1].length + 2 + m[2].length : label.length;
  return estimateTextWidthPx('0'.repeat(chars), FONT_PT.tick);
}

export type AxisSide = 'bottom' | 'left' | 'right';

/**
 * One <g class="tick"> per tick at a finite position (data-value, data-pos), handed to `draw` with the tick's
 * pixel position and mark length (minor ticks are 0.6 as long).
 */
function eachTick(g: D3Selection, scale: ContinuousScale, ticks: Tick[], draw: (tg: D3Selection, t: Tick, p: number, len: number) => void): void {
  for (const t of ticks) {
    const p = scale(t.value);
    if (!Number.isFinite(p)) continue;
    const tg = g.append('g').attr('class', t.major ? 'tick' : 'tick minor').attr('data-value', dataNum(t.value)).attr('data-pos', px(p));
    draw(tg, t, p, t.major ? TICK_LEN : TICK_LEN * 0.6);
  }
}

/**
 * Draw an axis line with ticks and labels along one side of `plot`. Each tick is a <g class="tick"> with
 * data-value (the data coordinate) and data-pos (the pixel coordinate along the axis), so tests can recover
 * the mapping. Returns the extent (px) the tick labels occupy away from the axis.
 */
export function drawAxis(
  parent: D3Selection,
  side: AxisSide,
  scale: ContinuousScale,
  ticks: Tick[],
  plot: PlotRect,
  label: string,
  name: string,
  labelOffset: number,
  offsetX = 0,
): D3Selection {
  const g = parent.append('g').attr('class', 'axis').attr('data-axis', name);
  const [r0, r1] = scale.range();
  const x0 = plot.left + offsetX;
  if (side === 'bottom') {
    const y = plot.top + plot.height;
    g.append('path')
      .attr('class', 'domain')
      .attr('d', `M${px(Math.min(r0, r1))},${px(y)}H${px(Math.max(r0, r1))}`)
      .attr('stroke', '#000000')
      .attr('stroke-width', px(STROKE.axis));
    eachTick(g, scale, ticks, (tg, t, p, len) => {
      tg.append('path').attr('d', `M${px(p)},${px(y)}v${px(len)}`).attr('stroke', '#000000').attr('stroke-width', px(STROKE.axis));
      if (t.label) {
        const tt = addText(tg, '', p, y + TICK_LEN + TICK_GAP + ptToPx(FONT_PT.tick) * 0.8, FONT_PT.tick, { anchor: 'middle' });
        writeTickLabel(tt, t.label);
      }
    });
    addText(g, label, (Math.min(r0, r1) + Math.max(r0, r1)) / 2, y + labelOffset, FONT_PT.label, { anchor: 'middle', cls: 'axis-label' });
  } else {
    const x = side === 'left' ? x0 : x0 + plot.width;
    const dir = side === 'left' ? -1 : 1;
    g.append('path')
      .attr('class', 'domain')
      .attr('d', `M${px(x)},${px(Math.min(r0, r1))}V${px(Math.max(r0, r1))}`)
      .attr('stroke', '#000000')
      .attr('stroke-width', px(STROKE.axis));
    eachTick(g, scale, ticks, (tg, t, p, len) => {
      tg.append('path').attr('d', `M${px(x)},${px(p)}h${px(dir * len)}`).attr('stroke', '#000000').attr('stroke-width', px(STROKE.axis));
      if (t.label) {
        const tt = addText(tg, '', x + dir * (TICK_LEN + TICK_GAP), p + ptToPx(FONT_PT.tick) * 0.35, FONT_PT.tick, {
          anchor: side === 'left' ? 'end' : 'start',
        });
        writeTickLabel(tt, t.label);
      }
    });
    const cy = (Math.min(r0, r1) + Math.max(r0, r1)) / 2;
    // rotated by −90°, glyphs extend towards −x from the baseline: on the right side shift by one em
    const lx = side === 'left' ? x - labelOffset : x + labelOffset + ptToPx(FONT_PT.label) * 0.75;
    addText(g, label, lx, cy, FONT_PT.label, { anchor: 'middle', rotate: -90, cls: 'axis-label' });
  }
  return g;
}

/** Height needed below the plot for x tick labels and the x label. */
export function bottomAxisHeight(): number {
  return TICK_LEN + TICK_GAP + ptToPx(FONT_PT.tick) + 3 + ptToPx(FONT_PT.label) + 2;
}
/** Distance from the x axis line to the x-label baseline. */
export function bottomLabelOffset(): number {
  return TICK_LEN + TICK_GAP + ptToPx(FONT_PT.tick) + 3 + ptToPx(FONT_PT.label) * 0.8;
}

/** Width needed beside the plot for y tick labels and the rotated y label, given the tick labels. */
export function sideAxisWidth(ticks: Tick[]): number {
  const w = ticks.reduce((m, t) => Math.max(m, t.label ? tickLabelWidth(t.label) : 0), 0);
  return TICK_LEN + TICK_GAP + w + 4 + ptToPx(FONT_PT.label) * 1.05;
}
export function sideLabelOffset(ticks: Tick[]): number {
  const w = ticks.reduce((m, t) => Math.max(m, t.label ? tickLabelWidth(t.label) : 0), 0);
  return TICK_LEN + TICK_GAP + w + 4 + ptToPx(FONT_PT.label) * 0.3;
}
