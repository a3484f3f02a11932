// Test helpers for the report tests: strict XML parsing (jsdom's DOMParser, via d3-node), path parsing,
// tick read-out and a least-squares axis fit. These are written independently of src/report's internals:
// they read only what a viewer would see (element geometry and text), not the data-* attributes.
import { D3Node } from 'd3-node';

const dn = new D3Node();
const win = dn.window;

/** Parse as XML (image/svg+xml); throws if the text is not well-formed. */
export function parseSvg(svg: string): Document {
  const doc = new win.DOMParser().parseFromString(svg, 'image/svg+xml');
  const err = doc.getElementsByTagName('parsererror');
  if (err.length > 0) throw new Error(`SVG is not well-formed XML: ${err[0].textContent}`);
  return doc;
}

export function parseHtml(html: string): Document {
  return new win.DOMParser().parseFromString(html, 'text/html');
}

/** Absolute path commands M/L/H/V (what the library writes); returns subpaths of [x, y] points. */
export function parsePath(d: string): number[][][] {
  const subs: number[][][] = [];
  const re = /([MLHVmlhv])([^MLHVmlhv]*)/g;
  let cur: number[][] = [];
  let x = 0;
  let y = 0;
  for (const m of d.matchAll(re)) {
    const nums = m[2].split(/[\s,]+/).filter((s) => s.length > 0).map(Number);
    switch (m[1]) {
      case 'M':
        if (cur.length) subs.push(cur);
        x = nums[0];
        y = nums[1];
        cur = [[x, y]];
        break;
      case 'L':
        x = nums[0];
        y = nums[1];
        cur.push([x, y]);
        break;
      case 'H':
        x = nums[0];
        cur.push([x, y]);
        break;
      case 'V':
        y = nums[0];
        cur.push([x, y]);
        break;
      case 'h':
        x += nums[0];
        cur.push([x, y]);
        break;
      case 'v':
        y += nums[0];
        cur.push([x, y]);
        break;
      default:
        throw new Error(`unsupported path command ${m[1]}`);
    }
  }
  if (cur.length) subs.push(cur);
  return subs;
}

/** Numeric value of a tick label as shown: U+2212 minus, and "10" (or "−10") followed by a superscript tspan = ±10^e. */
export function tickLabelValue(text: Element): number {
  const tspans = text.getElementsByTagName('tspan');
  const minus = (s: string): string => s.replace(/\u2212/g, '-').trim();
  if (tspans.length === 1) {
    // "−10" with a superscript e is −(10^e)
    const base = Number(minus(text.firstChild?.nodeValue ?? ''));
    const exp = Number(minus(tspans[0].textContent ?? ''));
    return Math.sign(base) * Math.pow(Math.abs(base), exp);
  }
  return Number(minus(text.textContent ?? ''));
}

export interface AxisTick {
  pos: number; // pixel position along the axis, from the tick mark's path
  value: number; // value read from the label text
}

/** Labelled ticks of the axis group data-axis=name: position from the tick mark path, value from its label. */
export function readTicks(doc: Document, name: string): AxisTick[] {
  const axis = doc.querySelector(`g.axis[data-axis="${name}"]`);
  if (!axis) throw new Error(`no axis ${name}`);
  const ticks: AxisTick[] = [];
  for (const g of Array.from(axis.querySelectorAll('g.tick'))) {
    const text = g.querySelector('text');
    const mark = g.querySelector('path');
    if (!text || !mark) continue;
    const p = parsePath(mark.getAttribute('d') ?? '')[0][0];
    const vertical = name === 'x';
    ticks.push({ pos: vertical ? p[0] : p[1], value: tickLabelValue(text) });
  }
  return ticks;
}

/** Least-squares fit value = a + b·pos (or log10 value for log axes); returns the inverse map and its slope. */
export function fitAxis(ticks: AxisTick[], log = false): { toValue: (pos: number) => number; unitsPerPx: number; maxResidualPx: number } {
  const n = ticks.length;
  const v = ticks.map((t) => (log ? Math.log10(t.value) : t.value));
  const p = ticks.map((t) => t.pos);
  const mp = p.reduce((s, q) => s + q, 0) / n;
  const mv = v.reduce((s, q) => s + q, 0) / n;
  let spp = 0;
  let spv = 0;
  for (let i = 0; i < n; i++) {
    spp += (p[i] - mp) ** 2;
    spv += (p[i] - mp) * (v[i] - mv);
  }
  const b = spv / spp;
  const a = mv - b * mp;
  let maxRes = 0;
  for (let i = 0; i < n; i++) maxRes = Math.max(maxRes, Math.abs((a + b * p[i] - v[i]) / b));
  return {
    toValue: (pos: number) => (log ? Math.pow(10, a + b * pos) : a + b * pos),
    unitsPerPx: Math.abs(b),
    maxResidualPx: maxRes,
  };
}

/** Every attribute value of every element, for scanning. */
export function allAttributeValues(doc: Document): string[] {
  const out: string[] = [];
  for (const el of Array.from(doc.getElementsByTagName('*'))) {
    for (const a of Array.from(el.attributes)) out.push(a.value);
  }
  return out;
}

/** Printed font size in pt of a <text>: own or inherited font-size (viewBox px) scaled by width(mm)/viewBox. */
export function printedFontPt(doc: Document, text: Element): number {
  const svg = doc.documentElement;
  const vbW = Number((svg.getAttribute('viewBox') ?? '').split(/\s+/)[2]);
  const wMm = parseFloat(svg.getAttribute('width') ?? '');
  let el: Element | null = text;
  let fs = NaN;
  while (el) {
    const v = el.getAttribute('font-size');
    if (v) {
      fs = parseFloat(v);
      break;
    }
    el = el.parentElement;
  }
  const pxToMm = wMm / vbW;
  return ((fs * pxToMm) / 25.4) * 72;
}

/** Deterministic pseudo-random numbers in [0, 1): 32-bit LCG (Numerical Recipes, Press et al. 2007, §7.1). */
export function lcg(start: number): () => number {
  let s = start >>> 0;
  return () => {
    s = (Math.imul(1664525, s) + 1013904223) >>> 0;
    return s / 4294967296;
  };
}
