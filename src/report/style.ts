/**
 * Print style for isotrap figures: physical sizes, fonts, colour map, categorical palette and dash patterns.
 *
 * Geometry: every SVG uses a viewBox in CSS px at 96 dpi (1 px = 25.4/96 mm) and width/height attributes in mm,
 * so one viewBox unit prints as exactly 1/96 inch when the figure is placed at its nominal width. Font sizes
 * are therefore given in pt and converted with px = pt · 96/72.
 */

/** CSS reference pixel density (CSS Values and Units Level 3: 1 in = 96 px). */
export const PX_PER_INCH = 96;
/** 1 inch = 25.4 mm exactly (international inch, 1959). */
export const MM_PER_INCH = 25.4;
/** 1 pt = 1/72 inch (PostScript / CSS point). */
export const PT_PER_INCH = 72;

/** One journal column, 86 mm (common practice for two-column physics journals, e.g. APS). */
export const SINGLE_COLUMN_MM = 86;
/** Two journal columns, 178 mm (common practice, same source as above). */
export const DOUBLE_COLUMN_MM = 178;
/** Smallest font size allowed at print size; 7 pt is the usual journal minimum (common practice). */
export const MIN_FONT_PT = 7;

export type FigureWidth = 'single' | 'double';

export function mmToPx(mm: number): number {
  return (mm / MM_PER_INCH) * PX_PER_INCH;
}
export function pxToMm(px: number): number {
  return (px / PX_PER_INCH) * MM_PER_INCH;
}
export function ptToPx(pt: number): number {
  return (pt / PT_PER_INCH) * PX_PER_INCH;
}
export function pxToPt(px: number): number {
  return (px / PX_PER_INCH) * PT_PER_INCH;
}

export function figureWidthMm(width: FigureWidth): number {
  return width === 'single' ? SINGLE_COLUMN_MM : DOUBLE_COLUMN_MM;
}

/** Default plot height as a fraction of the width: ~0.7 for one column, ~0.45 for two (common practice). */
export function defaultHeightMm(width: FigureWidth): number {
  return width === 'single' ? 60 : 80;
}

/** Figure sizes: 'paper' draws at the journal sizes above; 'slides' draws every figure as one projector panel. */
export const FIGURE_SIZES = ['paper', 'slides'] as const;
export type FigureSize = (typeof FIGURE_SIZES)[number];

export function isFigureSize(v: unknown): v is FigureSize {
  return typeof v === 'string' && (FIGURE_SIZES as readonly string[]).includes(v);
}

/** Slide panel width, 254 mm (10 in): a 16:9 slide is 13.33 in × 7.5 in, leaving margins and a title line (common practice). */
export const SLIDE_WIDTH_MM = 254;
/** Slide panels are 16:9 (plot block; a legend or notes below add to it), the widescreen slide format (common practice). */
export const SLIDE_ASPECT = 16 / 9;
/**
 * Slide figures are the paper layout magnified by this factor (text, strokes, ticks and markers alike), so the
 * smallest text, 7 pt tick labels, shows at 16 pt and axis labels at 18 pt on the 254 mm panel; projected text
 * should be at least 14 pt to be read from the back of a room (common practice).
 */
export const SLIDE_MAGNIFICATION = 16 / 7;

/** Print scale of a figure size: mm on paper (or slide) per viewBox px. */
export function mmPerPx(size: FigureSize): number {
  return (MM_PER_INCH / PX_PER_INCH) * (size === 'slides' ? SLIDE_MAGNIFICATION : 1);
}

/**
 * Layout size of a figure in viewBox px: its width, and the plot-block height (heightMm, printed mm, or the
 * default). Paper: the column width of `width`. Slides: one 16:9 panel of SLIDE_WIDTH_MM whatever `width`.
 */
export function figureLayoutPx(size: FigureSize, width: FigureWidth, heightMm: number | undefined): { widthPx: number; heightPx: number } {
  const scale = mmPerPx(size);
  const wMm = size === 'slides' ? SLIDE_WIDTH_MM : figureWidthMm(width);
  const hMm = heightMm ?? (size === 'slides' ? SLIDE_WIDTH_MM / SLIDE_ASPECT : defaultHeightMm(width));
  return { widthPx: wMm / scale, heightPx: hMm / scale };
}

/** Font sizes in pt at print size; all ≥ MIN_FONT_PT. */
export const FONT_PT = {
  tick: 7,
  label: 8,
  legend: 7,
  title: 9,
  annotation: 7,
} as const;

/** Generic sans-serif stack; text stays as <text> elements (vector, searchable, no outlines). */
export const FONT_FAMILY = 'Helvetica, Arial, "Liberation Sans", "DejaVu Sans", sans-serif';

/** Stroke widths in px (viewBox units): 1 px ≈ 0.26 mm ≈ 0.75 pt, visible in print (common practice). */
export const STROKE = { axis: 0.8, data: 1.4, overlay: 1.3, halo: 3.0, grid: 0.4 } as const;

/**
 * Average advance width of a sans-serif glyph in em; used to estimate text extents for layout without font
 * metrics. Helvetica digits are 0.556 em (from memory of the Adobe AFM file) and lowercase text averages a
 * little less, so 0.56 errs on the wide side (layout never too tight).
 */
export const AVG_GLYPH_EM = 0.56;

export function estimateTextWidthPx(text: string, fontPt: number): number {
  return text.length * AVG_GLYPH_EM * ptToPx(fontPt);
}

// ---------------------------------------------------------------------------------------------------------
// Colour utilities

export type RGB = readonly [number, number, number]; // 0..255 each

export function hexToRgb(hex: string): RGB {
  const m = /^#?([0-9a-fA-F]{6})$/.exec(hex);
  if (!m) throw new RangeError(`hexToRgb: not a #rrggbb colour: ${hex}`);
  const v = parseInt(m[1], 16);
  return [(v >> 16) & 255, (v >> 8) & 255, v & 255];
}

export function rgbToHex(rgb: RGB): string {
  const h = (c: number): string => Math.max(0, Math.min(255, Math.round(c))).toString(16).padStart(2, '0');
  return `#${h(rgb[0])}${h(rgb[1])}${h(rgb[2])}`;
}

/** sRGB transfer function inverse, IEC 61966-2-1:1999 eq. (5): C' ≤ 0.04045 → C'/12.92, else ((C'+0.055)/1.055)^2.4. */
export function srgbToLinear(c8: number): number {
  const c = c8 / 255;
  return c <= 0.04045 ? c / 12.92 : Math.pow((c + 0.055) / 1.055, 2.4);
}

/** Relative luminance Y (D65, Y_white = 1) from sRGB, IEC 61966-2-1 matrix row Y = 0.2126 R + 0.7152 G + 0.0722 B. */
export function relativeLuminance(rgb: RGB): number {
  return 0.2126 * srgbToLinear(rgb[0]) + 0.7152 * srgbToLinear(rgb[1]) + 0.0722 * srgbToLinear(rgb[2]);
}

/**
 * CIE 1976 lightness L* (CIE 15:2004 eq. 8.1): L* = 116 f(Y/Yn) − 16 with f(t) = t^{1/3} for t > (6/29)³,
 * else t/(3(6/29)²) + 4/29; Yn = 1 for the D65 white of sRGB.
 */
export function cieLightness(rgb: RGB): number {
  const t = relativeLuminance(rgb);
  const d = 6 / 29;
  const f = t > d * d * d ? Math.cbrt(t) : t / (3 * d * d) + 4 / 29;
  return 116 * f - 16;
}

/**
 * Viridis control points: matplotlib's published 256-entry viridis table (van der Walt & Smith, "mpl colormaps",
 * matplotlib 2.0, 2015) sampled at indices 0, 8, …, 248, 255. Piecewise-linear interpolation between these 33
 * points reproduces all 256 table entries to within 2/255 per channel (checked in tests/report-style.test.ts
 * against the full table as redistributed in d3-scale-chromatic).
 */
export const VIRIDIS_CONTROL_INDEX: readonly number[] = [
  0, 8, 16, 24, 32, 40, 48, 56, 64, 72, 80, 88, 96, 104, 112, 120, 128, 136, 144, 152, 160, 168, 176, 184, 192, 200,
  208, 216, 224, 232, 240, 248, 255,
];
export const VIRIDIS_CONTROL_HEX: readonly string[] = [
  '#440154', '#470d60', '#48186a', '#482374', '#472d7b', '#453781', '#424086', '#3e4989', '#3b528b', '#375b8d',
  '#33638d', '#2f6b8e', '#2c728e', '#297a8e', '#26828e', '#23898e', '#21918c', '#1f988b', '#1fa088', '#22a785',
  '#28ae80', '#32b67a', '#3fbc73', '#4ec36b', '#5ec962', '#70cf57', '#84d44b', '#98d83e', '#addc30', '#c2df23',
  '#d8e219', '#ece51b', '#fde725',
];
/** Length of the matplotlib table minus one; control point k sits at t = VIRIDIS_CONTROL_INDEX[k] / 255. */
const VIRIDIS_TABLE_LAST = 255;
const VIRIDIS_RGB: readonly RGB[] = VIRIDIS_CONTROL_HEX.map(hexToRgb);

/**
 * Viridis colour at t ∈ [0, 1] (clamped) as unrounded RGB 0..255, by piecewise-linear interpolation in sRGB
 * between the control points above. Non-finite t is an error: callers handle missing data themselves.
 */
export function viridisRgb(t: number): [number, number, number] {
  if (!Number.isFinite(t)) throw new RangeError(`viridis: t must be finite, got ${t}`);
  const s = Math.min(1, Math.max(0, t)) * VIRIDIS_TABLE_LAST;
  let k = 0;
  while (k < VIRIDIS_CONTROL_INDEX.length - 2 && VIRIDIS_CONTROL_INDEX[k + 1] < s) k++;
  const i0 = VIRIDIS_CONTROL_INDEX[k];
  const i1 = VIRIDIS_CONTROL_INDEX[k + 1];
  const f = (s - i0) / (i1 - i0);
  const a = VIRIDIS_RGB[k];
  const b = VIRIDIS_RGB[k + 1];
  return [a[0] + f * (b[0] - a[0]), a[1] + f * (b[1] - a[1]), a[2] + f * (b[2] - a[2])];
}

export function viridis(t: number): string {
  return rgbToHex(viridisRgb(t));
}

/**
 * Precomputed 8-bit lookup table of `size` entries (RGB interleaved) for fast colouring of many cells.
 * Entry j is viridis(j / (size − 1)).
 */
export function viridisLut(size = 256): Uint8Array {
  const lut = new Uint8Array(size * 3);
  for (let j = 0; j < size; j++) {
    const c = viridisRgb(size === 1 ? 0 : j / (size - 1));
    lut[3 * j] = Math.round(c[0]);
    lut[3 * j + 1] = Math.round(c[1]);
    lut[3 * j + 2] = Math.round(c[2]);
  }
  return lut;
}

/**
 * Okabe & Ito (2008), "Color Universal Design (CUD): how to make figures and presentations that are friendly to
 * colorblind people", the eight-colour set. Values from memory of the published RGB table
 * (e.g. orange 230,159,0; sky blue 86,180,233; bluish green 0,158,115; yellow 240,228,66; blue 0,114,178;
 * vermillion 213,94,0; reddish purple 204,121,167; black 0,0,0).
 */
export const OKABE_ITO = {
  black: '#000000',
  orange: '#e69f00',
  skyBlue: '#56b4e9',
  bluishGreen: '#009e73',
  yellow: '#f0e442',
  blue: '#0072b2',
  vermillion: '#d55e00',
  reddishPurple: '#cc79a7',
} as const;

/**
 * Series order: strong colours first; yellow last because it has poor contrast on white paper (common practice).
 */
export const SERIES_COLORS: readonly string[] = [
  OKABE_ITO.blue,
  OKABE_ITO.vermillion,
  OKABE_ITO.bluishGreen,
  OKABE_ITO.reddishPurple,
  OKABE_ITO.orange,
  OKABE_ITO.skyBlue,
  OKABE_ITO.black,
  OKABE_ITO.yellow,
];

/**
 * stroke-dasharray patterns in px (viewBox units) so that series stay distinguishable in greyscale;
 * '' = solid. Lengths are a few stroke widths (common practice).
 */
export const DASH_PATTERNS: readonly string[] = ['', '5 2.5', '1.5 1.5', '6 2 1.5 2', '9 3', '3 1.5 1.5 1.5 1.5 1.5', '2 3', '7 2 2 2 2 2'];

export function seriesColor(i: number): string {
  return SERIES_COLORS[((i % SERIES_COLORS.length) + SERIES_COLORS.length) % SERIES_COLORS.length];
}
export function seriesDash(i: number): string {
  return DASH_PATTERNS[((i % DASH_PATTERNS.length) + DASH_PATTERNS.length) % DASH_PATTERNS.length];
}

/** "name symbol (unit)", e.g. quantityLabel('time', 't', 'ms') → "time t (ms)"; unit '' or undefined for dimensionless. */
export function quantityLabel(name: string, symbol?: string, unit?: string): string {
  let s = name;
  if (symbol) s += ` ${symbol}`;
  if (unit) s += ` (${unit})`;
  return s;
}
