// Headless-browser check of the HTML report: build a page with renderReport from real figures, open it in
// Debian's Chromium (via playwright-core, which never downloads a browser of its own here: we pass
// executablePath), take a full-page screenshot, decode it with node:zlib and check that every figure painted.
//
// Requirements: /usr/bin/chromium (Debian package "chromium"; install with `bash .ci/install-browser.sh`).
// Environment: ISOTRAP_NO_BROWSER=1 skips this file on purpose (for machines that cannot have a browser);
// without it a missing browser fails the test loudly. ISOTRAP_CHROMIUM=/path overrides the browser path;
// ISOTRAP_BROWSER_SHOT=/path.png keeps a copy of the screenshot for a look by eye.
import { existsSync } from 'node:fs';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { inflateSync } from 'node:zlib';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { barChart, heatmap, lineChart } from '../src/report/index.ts';
import { renderReport } from '../src/report/html.ts';
import { encodePngRgba } from '../src/report/png.ts';

const SKIP = process.env.ISOTRAP_NO_BROWSER === '1';
const CHROMIUM = process.env.ISOTRAP_CHROMIUM ?? '/usr/bin/chromium';
/** Flags for a quiet, offline, reproducible headless run (--user-data-dir is given via launchPersistentContext). */
const CHROMIUM_FLAGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
  '--disable-quic',
];
/** Browser start-up limit, ms: a cold start of Chromium takes ~1 s here; 15 s keeps the file < 20 s even then. */
const LAUNCH_TIMEOUT_MS = 15_000;
/** Viewport in CSS px; 2× device pixels so that 1.4 px data strokes have fully covered pixels (common practice). */
const VIEWPORT = { width: 800, height: 600 };
const DEVICE_SCALE = 2;
/** A pixel counts as "painted" if any channel differs from page white by more than this (common practice). */
const PAINT_THRESHOLD = 16;
/** Per-channel tolerance when looking for an exact palette colour (rasteriser rounding; common practice). */
const COLOUR_TOL = 6;

// ---------------------------------------------------------------------------------------------------------
// figures from closed-form data

/** Pöschl–Teller well u(ξ) = −N(N+1) sech² ξ and its derivative u′ = 2N(N+1) sech² ξ tanh ξ (physics.md). */
function sech2Well(n: number, xi: Float64Array): { u: Float64Array; du: Float64Array } {
  const a = n * (n + 1);
  const u = new Float64Array(xi.length);
  const du = new Float64Array(xi.length);
  for (let i = 0; i < xi.length; i++) {
    const s = 1 / Math.cosh(xi[i]);
    u[i] = -a * s * s;
    du[i] = 2 * a * s * s * Math.tanh(xi[i]);
  }
  return { u, du };
}

/**
 * Closed-form KdV two-soliton from u(ξ,0) = −6 sech² ξ (Drazin & Johnson, Solitons: an Introduction, 1989):
 * u = −12 [3 + 4 cosh(2ξ − 8τ) + cosh(4ξ − 64τ)] / [3 cosh(ξ − 28τ) + cosh(3ξ − 36τ)]².
 */
function twoSoliton(xi: number, tau: number): number {
  const num = 3 + 4 * Math.cosh(2 * xi - 8 * tau) + Math.cosh(4 * xi - 64 * tau);
  const den = 3 * Math.cosh(xi - 28 * tau) + Math.cosh(3 * xi - 36 * tau);
  return (-12 * num) / (den * den);
}

function linspace(a: number, b: number, n: number): Float64Array {
  return Float64Array.from({ length: n }, (_, i) => a + ((b - a) * i) / (n - 1));
}

function buildFigures(): { id: string; caption: string; svg: string }[] {
  const xi = linspace(-5, 5, 401);
  const w = sech2Well(2, xi);
  const hx = linspace(-6, 14, 160);
  const ht = linspace(0, 0.6, 90);
  const z = Array.from(ht, (t) => hx.map((x) => twoSoliton(x, t)));
  // Pöschl–Teller bound states E_n = −(N − n)², n = 0…N−1 (Landau & Lifshitz, Quantum Mechanics §23)
  const groups = [1, 2, 3].map((N) => ({
    label: `N = ${N}`,
    values: Array.from({ length: N }, (_, n) => ({ name: `n = ${n}`, value: -((N - n) ** 2) })),
  }));
  return [
    {
      id: 'fig-well',
      caption: 'Pöschl–Teller well u = −6 sech² ξ and its slope.',
      svg: lineChart({
        xLabel: 'position ξ',
        yLabel: 'u, ∂u/∂ξ (E₀)',
        series: [
          { name: 'u(ξ)', x: xi, y: w.u },
          { name: '∂u/∂ξ', x: xi, y: w.du },
        ],
        width: 'single',
      }),
    },
    {
      id: 'fig-soliton',
      caption: 'KdV two-soliton from −6 sech² ξ.',
      svg: heatmap({ xLabel: 'position ξ', yLabel: 'time τ', zLabel: 'u (E₀)', x: hx, y: ht, z, width: 'double' }),
    },
    {
      id: 'fig-levels',
      caption: 'Bound-state energies of −N(N+1) sech² ξ.',
      svg: barChart({ xLabel: 'well', yLabel: 'energy E (E₀)', groups }),
    },
  ];
}

// ---------------------------------------------------------------------------------------------------------
// PNG decoding (PNG specification, W3C 2nd ed. 2003: §4.4 colour types, §9 filtering, §9.4 Paeth predictor)

interface Rgba {
  width: number;
  height: number;
  data: Uint8Array; // RGBA, 8 bit, row-major
}

/** Decode an 8-bit, non-interlaced greyscale/RGB/RGBA PNG (what Chromium writes) into RGBA pixels. */
function decodePng(buf: Uint8Array): Rgba {
  const sig = [137, 80, 78, 71, 13, 10, 26, 10];
  for (let i = 0; i < 8; i++) if (buf[i] !== sig[i]) throw new Error('not a PNG file');
  const dv = new DataView(buf.buffer, buf.byteOffset, buf.byteLength);
  let off = 8;
  let width = 0;
  let height = 0;
  let colourType = -1;
  const idat: Uint8Array[] = [];
  while (off < buf.length) {
    const len = dv.getUint32(off);
    const type = String.fromCharCode(buf[off + 4], buf[off + 5], buf[off + 6], buf[off + 7]);
    const body = buf.subarray(off + 8, off + 8 + len);
    if (type === 'IHDR') {
      width = dv.getUint32(off + 8);
      height = dv.getUint32(off + 12);
      const depth = body[8];
      colourType = body[9];
      if (depth !== 8 || body[12] !== 0 || ![0, 2, 4, 6].includes(colourType)) {
        throw new Error(`unsupported PNG: bit depth ${depth}, colour type ${colourType}, interlace ${body[12]}`);
      }
    } else if (type === 'IDAT') idat.push(body);
    else if (type === 'IEND') break;
    off += 12 + len;
  }
  const bpp = ({ 0: 1, 2: 3, 4: 2, 6: 4 } as Record<number, number>)[colourType];
  const raw = inflateSync(Buffer.concat(idat));
  const stride = width * bpp;
  if (raw.length !== height * (stride + 1)) throw new Error(`PNG data length ${raw.length} ≠ ${height}·(${stride}+1)`);
  const rows = new Uint8Array(height * stride);
  for (let y = 0; y < height; y++) {
    const f = raw[y * (stride + 1)];
    const src = y * (stride + 1) + 1;
    const dst = y * stride;
    for (let i = 0; i < stride; i++) {
      const a = i >= bpp ? rows[dst + i - bpp] : 0;
      const b = y > 0 ? rows[dst - stride + i] : 0;
      const c = i >= bpp && y > 0 ? rows[dst - stride + i - bpp] : 0;
      let pred: number;
      switch (f) {
        case 0:
          pred = 0;
          break;
        case 1:
          pred = a;
          break;
        case 2:
          pred = b;
          break;
        case 3:
          pred = (a + b) >> 1;
          break;
        case 4: {
          const p = a + b - c;
          const pa = Math.abs(p - a);
          const pb = Math.abs(p - b);
          const pc = Math.abs(p - c);
          pred = pa <= pb && pa <= pc ? a : pb <= pc ? b : c;
          break;
        }
        default:
          throw new Error(`bad PNG filter type ${f} in row ${y}`);
      }
      rows[dst + i] = (raw[src + i] + pred) & 0xff;
    }
  }
  const data = new Uint8Array(width * height * 4);
  for (let p = 0; p < width * height; p++) {
    const s = p * bpp;
    if (colourType === 6) data.set(rows.subarray(s, s + 4), p * 4);
    else if (colourType === 2) data.set([rows[s], rows[s + 1], rows[s + 2], 255], p * 4);
    else if (colourType === 4) data.set([rows[s], rows[s], rows[s], rows[s + 1]], p * 4);
    else data.set([rows[s], rows[s], rows[s], 255], p * 4);
  }
  return { width, height, data };
}

interface Box {
  id: string;
  x: number;
  y: number;
  width: number;
  height: number;
}

interface BoxStats {
  pixels: number;
  painted: number;
  lumaVariance: number;
}

/** Device-pixel rectangle of a CSS-px box, clamped to the image. */
function deviceRect(img: Rgba, b: Box): [number, number, number, number] {
  const x0 = Math.max(0, Math.floor(b.x * DEVICE_SCALE));
  const y0 = Math.max(0, Math.floor(b.y * DEVICE_SCALE));
  const x1 = Math.min(img.width, Math.ceil((b.x + b.width) * DEVICE_SCALE));
  const y1 = Math.min(img.height, Math.ceil((b.y + b.height) * DEVICE_SCALE));
  return [x0, y0, x1, y1];
}

/** Painted-pixel count and variance of luma Y = 0.299R + 0.587G + 0.114B (ITU-R BT.601) inside a box. */
function boxStats(img: Rgba, b: Box): BoxStats {
  const [x0, y0, x1, y1] = deviceRect(img, b);
  let n = 0;
  let painted = 0;
  let s = 0;
  let s2 = 0;
  for (let y = y0; y < y1; y++) {
    for (let x = x0; x < x1; x++) {
      const o = (y * img.width + x) * 4;
      const r = img.data[o];
      const g = img.data[o + 1];
      const bl = img.data[o + 2];
      if (255 - r > PAINT_THRESHOLD || 255 - g > PAINT_THRESHOLD || 255 - bl > PAINT_THRESHOLD) painted++;
      const l = 0.299 * r + 0.587 * g + 0.114 * bl;
      s += l;
      s2 += l * l;
      n++;
    }
  }
  const mean = n > 0 ? s / n : 0;
  return { pixels: n, painted, lumaVariance: n > 0 ? s2 / n - mean * mean : 0 };
}

/** Number of pixels in a box within COLOUR_TOL of the colour '#rrggbb' in every channel. */
function countColour(img: Rgba, b: Box, hex: string): number {
  const want = [1, 3, 5].map((i) => parseInt(hex.slice(i, i + 2), 16));
  const [x0, y0, x1, y1] = deviceRect(img, b);
  let k = 0;
  for (let y = y0; y < y1; y++) {
    for (let x = x0; x < x1; x++) {
      const o = (y * img.width + x) * 4;
      if (Math.abs(img.data[o] - want[0]) <= COLOUR_TOL && Math.abs(img.data[o + 1] - want[1]) <= COLOUR_TOL && Math.abs(img.data[o + 2] - want[2]) <= COLOUR_TOL) k++;
    }
  }
  return k;
}

// ---------------------------------------------------------------------------------------------------------

describe.skipIf(SKIP)('HTML report in headless Chromium', () => {
  let dir = '';
  let context: BrowserContext | undefined;
  let page: Page;
  let shot: Uint8Array;
  let img: Rgba;
  let boxes: Box[] = [];
  const figures = buildFigures();
  const consoleErrors: string[] = [];
  const pageErrors: string[] = [];
  const foreignRequests: string[] = [];
  let fileUrl = '';

  beforeAll(async () => {
    if (!existsSync(CHROMIUM)) {
      throw new Error(
        `Chromium not found at ${CHROMIUM}. This test opens the HTML report in Debian's Chromium. Install it with ` +
          '`bash .ci/install-browser.sh` (runs `apt-get update && apt-get install -y --no-install-recommends chromium` as root), ' +
          'or set ISOTRAP_NO_BROWSER=1 to skip this test on a machine that cannot have a browser.',
      );
    }
    dir = await mkdtemp(join(tmpdir(), 'isotrap-browser-'));
    const html = renderReport({
      title: 'Browser check: sech² well and KdV two-soliton',
      summaryRows: [
        { key: 'well depth N(N+1)', value: 6, unit: 'E₀' },
        { key: 'bound states', value: 2 },
      ],
      figures,
      configText: 'potential:\n  kind: sech2\n  depth: 6\n',
      provenance: { toolVersion: '0.1.0', configHash: 'sha256:0000', date: '2026-12-01T00:00:00Z', runSeconds: 0.5 },
      warnings: [],
    });
    const htmlPath = join(dir, 'report.html');
    await writeFile(htmlPath, html, 'utf8');
    fileUrl = pathToFileURL(htmlPath).href;

    context = await chromium.launchPersistentContext(join(dir, 'profile'), {
      executablePath: CHROMIUM,
      headless: true,
      args: CHROMIUM_FLAGS,
      timeout: LAUNCH_TIMEOUT_MS,
      viewport: VIEWPORT,
      deviceScaleFactor: DEVICE_SCALE,
      offline: true,
    });
    page = context.pages()[0] ?? (await context.newPage());
    page.on('console', (m) => {
      if (m.type() === 'error') consoleErrors.push(m.text());
    });
    page.on('pageerror', (e) => pageErrors.push(String(e)));
    page.on('request', (r) => {
      if (r.url() !== fileUrl && !r.url().startsWith('data:')) foreignRequests.push(r.url());
    });
    await page.goto(fileUrl, { waitUntil: 'load', timeout: LAUNCH_TIMEOUT_MS });
    // the 'load' event already waits for the data: URI <image>s; also wait until they are decoded and fonts are
    // ready (Chromium has SVGImageElement.decode(), which TypeScript's DOM types do not list yet)
    await page.evaluate(async () => {
      await document.fonts.ready;
      const imgs = Array.from(document.querySelectorAll('image')) as unknown as { decode?: () => Promise<void> }[];
      await Promise.all(imgs.map((el) => el.decode?.()));
    });
    boxes = await page.$$eval('figure svg', (els) =>
      els.map((el) => {
        const r = el.getBoundingClientRect();
        return { id: el.parentElement?.id ?? '', x: r.x + window.scrollX, y: r.y + window.scrollY, width: r.width, height: r.height };
      }),
    );
    shot = new Uint8Array(await page.screenshot({ fullPage: true, type: 'png', animations: 'disabled' }));
    img = decodePng(shot);
    if (process.env.ISOTRAP_BROWSER_SHOT) await writeFile(process.env.ISOTRAP_BROWSER_SHOT, shot);
  }, 30_000);

  afterAll(async () => {
    await context?.close();
    if (dir) await rm(dir, { recursive: true, force: true });
  });

  it('decodes PNG correctly (checked against the report encoder and against Chromium’s own decoder)', async () => {
    // round trip through src/report/png.ts (filter 0); reference: the input pixels themselves
    const px = Uint8Array.from({ length: 3 * 2 * 4 }, (_, i) => (i * 37) & 0xff);
    const rt = decodePng(encodePngRgba(3, 2, px));
    expect([rt.width, rt.height]).toEqual([3, 2]);
    expect(Array.from(rt.data)).toEqual(Array.from(px));
    // screenshot size = full page in CSS px × device scale (Playwright docs, page.screenshot fullPage)
    const size = await page.evaluate(() => [document.documentElement.scrollWidth, document.documentElement.scrollHeight]);
    expect(img.width).toBe(size[0] * DEVICE_SCALE);
    expect(img.height).toBe(size[1] * DEVICE_SCALE);
    // Chromium's PNG decoder (uses every filter type) as the reference: sample pixels must match exactly
    // (a 12 × 12 grid over the whole page plus a column through the heatmap; Chromium 156 wrote this page with
    // row filters 1–4 (Sub, Up, Average, Paeth), filter 0 is covered by the round trip above)
    const probe: [number, number][] = [];
    for (let i = 0; i < 12; i++) for (let j = 0; j < 12; j++) probe.push([Math.floor(((i + 0.5) * img.width) / 12), Math.floor(((j + 0.5) * img.height) / 12)]);
    for (let k = 0; k < 24; k++) probe.push([Math.floor((boxes[1].x + boxes[1].width / 2) * DEVICE_SCALE) + k, Math.floor((boxes[1].y + (k + 0.5) * (boxes[1].height / 24)) * DEVICE_SCALE)]);
    const b64 = Buffer.from(shot).toString('base64');
    const ref = await page.evaluate(
      async ({ src, pts }) => {
        const im = new Image();
        im.src = src;
        await im.decode();
        const cv = document.createElement('canvas');
        cv.width = im.naturalWidth;
        cv.height = im.naturalHeight;
        const cx = cv.getContext('2d')!;
        cx.drawImage(im, 0, 0);
        return pts.map(([x, y]) => Array.from(cx.getImageData(x, y, 1, 1).data));
      },
      { src: `data:image/png;base64,${b64}`, pts: probe },
    );
    const mine = probe.map(([x, y]) => Array.from(img.data.subarray((y * img.width + x) * 4, (y * img.width + x) * 4 + 4)));
    expect(mine).toEqual(ref);
  });

  it('lays out one box per figure at its printed size', () => {
    // input: three figures, in this order
    expect(boxes.map((b) => b.id)).toEqual(figures.map((f) => f.id));
    boxes.forEach((b, i) => {
      // CSS Values and Units Level 3, §5.2: 1 in = 96 px = 25.4 mm, so a W mm wide figure is W·96/25.4 CSS px
      const attr = (name: string): number => Number(new RegExp(`<svg[^>]*\\s${name}="([0-9.]+)mm"`).exec(figures[i].svg)![1]);
      expect(b.width, b.id).toBeCloseTo((attr('width') * 96) / 25.4, 0);
      expect(b.height, b.id).toBeCloseTo((attr('height') * 96) / 25.4, 0);
      expect((b.y + b.height) * DEVICE_SCALE).toBeLessThanOrEqual(img.height);
    });
  });

  it('paints every figure (non-blank pixels inside each bounding box)', () => {
    for (const b of boxes) {
      const s = boxStats(img, b);
      // a figure with axes, tick labels and data covers well over 1 % of its box (common practice);
      // a blank (white) box gives painted = 0 and variance = 0
      expect(s.painted / s.pixels, b.id).toBeGreaterThan(0.01);
      expect(s.lumaVariance, b.id).toBeGreaterThan(100);
    }
    // control: a strip of page margin right of the figures is blank, so the check can fail
    const margin = { id: 'margin', x: VIEWPORT.width - 20, y: boxes[0].y, width: 15, height: boxes[0].height };
    expect(boxStats(img, margin).painted).toBe(0);
  });

  it('shows the data in their colours', () => {
    const [well, soliton, levels] = boxes;
    // series colours: Okabe & Ito, "Color Universal Design" (2008): blue #0072b2, vermillion #d55e00
    expect(countColour(img, well, '#0072b2')).toBeGreaterThan(100);
    expect(countColour(img, well, '#d55e00')).toBeGreaterThan(100);
    // heatmap PNG and colour bar: viridis end points #440154 and #fde725 (van der Walt & Smith, matplotlib
    // viridis table, 2015); the two-soliton minimum is −8 (depth 2κ² with κ = 2, Drazin & Johnson 1989)
    expect(countColour(img, soliton, '#440154')).toBeGreaterThan(50);
    expect(countColour(img, soliton, '#fde725')).toBeGreaterThan(50);
    // first bar series is plain Okabe–Ito blue
    expect(countColour(img, levels, '#0072b2')).toBeGreaterThan(100);
    // control: viridis yellow appears in no other figure
    expect(countColour(img, well, '#fde725')).toBe(0);
  });

  it('raises no console errors or page errors and loads nothing from outside', () => {
    // the report format has no scripts and no external resources (src/report/html.ts module doc)
    expect(consoleErrors).toEqual([]);
    expect(pageErrors).toEqual([]);
    expect(foreignRequests).toEqual([]);
  });
});
