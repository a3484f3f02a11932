/**
 * Self-contained HTML report: one page with inline CSS and inline SVG figures, no scripts and no external
 * resources, readable offline and printable. All text is escaped for HTML (& < > " '); figure SVGs are
 * inserted as markup after a check that they are plain SVG (no script, no foreignObject, no external refs).
 */
import { UserError } from '../core/errors.ts';
import type { SummaryRow } from '../io/formats/read.ts';

export type { SummaryRow };

export interface ReportFigure {
  id: string;
  caption: string;
  svg: string;
}

export interface Provenance {
  toolVersion: string;
  configHash: string;
  /** ISO 8601 date-time, or any string the caller wants shown. */
  date: string;
  runSeconds: number;
}

export interface ReportInput {
  title: string;
  summaryRows: SummaryRow[];
  figures: ReportFigure[];
  configText: string;
  provenance: Provenance;
  warnings: string[];
}

/** Escape text for HTML element content and quoted attribute values (HTML Living Standard, §13.1.2.6). */
export function escapeHtml(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;').replace(/'/g, '&#39;');
}

/** Figure ids become HTML id attributes and fragment targets: letters, digits, '-', '_' only. */
const FIGURE_ID = /^[A-Za-z][A-Za-z0-9_-]*$/;

/** Markup that must not appear in an inlined figure (active content or external loads). */
const FORBIDDEN_SVG = [/<script/i, /<foreignObject/i, /\son[a-z]+\s*=/i, /(?:xlink:)?href\s*=\s*["'](?!data:image\/png;base64,|#)/i, /<!DOCTYPE/i, /<!ENTITY/i];

/** Significant digits for numbers in the summary table (enough for fidelities like 0.999999; common practice). */
const SUMMARY_DIGITS = 7;

function formatValue(v: string | number): string {
  if (typeof v === 'string') return v;
  if (!Number.isFinite(v)) return String(v);
  if (Number.isInteger(v) && Math.abs(v) < 1e15) return String(v);
  const a = Math.abs(v);
  const r = Number(v.toPrecision(SUMMARY_DIGITS));
  return a !== 0 && (a < 1e-3 || a >= 1e6) ? r.toExponential() : String(r);
}

const CSS = `
:root { color-scheme: light; }
body { font-family: Helvetica, Arial, "Liberation Sans", "DejaVu Sans", sans-serif; margin: 2em auto; max-width: 190mm; padding: 0 1em; color: #111; background: #fff; line-height: 1.4; }
h1 { font-size: 1.5em; margin-bottom: 0.2em; }
h2 { font-size: 1.15em; margin-top: 1.6em; border-bottom: 1px solid #ccc; }
table.summary { border-collapse: collapse; }
table.summary th, table.summary td { text-align: left; padding: 0.15em 0.8em 0.15em 0; border-bottom: 1px solid #eee; vertical-align: top; }
table.summary td.value { font-variant-numeric: tabular-nums; }
figure { margin: 1.2em 0; page-break-inside: avoid; break-inside: avoid; }
figure svg { max-width: 100%; height: auto; display: block; }
figcaption { font-size: 0.9em; margin-top: 0.4em; }
figcaption .fig-number { font-weight: bold; }
ul.warnings li { color: #8a3b00; }
pre.config { background: #f6f6f6; border: 1px solid #ddd; padding: 0.6em; overflow-x: auto; font-size: 0.85em; white-space: pre-wrap; }
dl.provenance { display: grid; grid-template-columns: max-content auto; gap: 0.1em 1em; font-size: 0.9em; }
dl.provenance dt { font-weight: bold; }
dl.provenance dd { margin: 0; font-family: monospace; }
@media print { body { margin: 0; max-width: none; } h2 { page-break-after: avoid; } pre.config { white-space: pre-wrap; } }
`;

/** Strip an XML declaration if present and check the figure is inert SVG markup. */
function checkSvg(id: string, svg: string): string {
  if (typeof svg !== 'string') throw new RangeError(`figures[${JSON.stringify(id)}].svg must be a string`);
  const body = svg.replace(/^\s*<\?xml[^>]*\?>\s*/, '').trim();
  if (!body.startsWith('<svg') || !body.endsWith('</svg>')) {
    throw new RangeError(`figures[${JSON.stringify(id)}].svg must be one <svg>…</svg> element, got ${JSON.stringify(body.slice(0, 40))}`);
  }
  for (const re of FORBIDDEN_SVG) {
    if (re.test(body)) throw new UserError(`figures[${JSON.stringify(id)}].svg contains forbidden markup matching ${re}; only inert SVG is allowed`);
  }
  return body;
}

/**
 * Render the report page. Sections: title, summary table, warnings (if any), figures (numbered, with
 * captions), configuration (verbatim, escaped) and provenance. Malformed input is a caller's mistake
 * (RangeError); active SVG content and figure ids outside the allowed pattern are refused with a UserError.
 */
export function renderReport(r: ReportInput): string {
  if (typeof r.title !== 'string') throw new RangeError(`report.title must be a string, got ${JSON.stringify(r.title)}`);
  const ids = new Set<string>();
  for (const f of r.figures) {
    if (typeof f.id !== 'string' || !FIGURE_ID.test(f.id)) {
      throw new UserError(`figure id ${JSON.stringify(f.id)} is not allowed; use a letter followed by letters, digits, '-' or '_'`);
    }
    if (ids.has(f.id)) throw new RangeError(`figure id ${JSON.stringify(f.id)} is used twice; ids must be unique`);
    ids.add(f.id);
  }
  const p = r.provenance;
  if (!Number.isFinite(p.runSeconds) || p.runSeconds < 0) {
    throw new RangeError(`provenance.runSeconds must be a finite number ≥ 0, got ${p.runSeconds}`);
  }
  const out: string[] = [];
  out.push('<!DOCTYPE html>');
  out.push('<html lang="en">');
  out.push('<head>');
  out.push('<meta charset="utf-8">');
  out.push('<meta name="viewport" content="width=device-width, initial-scale=1">');
  out.push(`<meta name="generator" content="isotrap ${escapeHtml(p.toolVersion)}">`);
  out.push(`<title>${escapeHtml(r.title)}</title>`);
  out.push(`<style>${CSS}</style>`);
  out.push('</head>');
  out.push('<body>');
  out.push(`<h1>${escapeHtml(r.title)}</h1>`);
  out.push(`<p class="subtitle">isotrap ${escapeHtml(p.toolVersion)} · ${escapeHtml(p.date)}</p>`);

  out.push('<section id="summary"><h2>Summary</h2>');
  if (r.summaryRows.length > 0) {
    out.push('<table class="summary"><thead><tr><th>quantity</th><th>value</th><th>unit</th></tr></thead><tbody>');
    for (const row of r.summaryRows) {
      out.push(`<tr><th scope="row">${escapeHtml(row.key)}</th><td class="value">${escapeHtml(formatValue(row.value))}</td><td class="unit">${escapeHtml(row.unit ?? '')}</td></tr>`);
    }
    out.push('</tbody></table>');
  } else out.push('<p>No summary values.</p>');
  out.push('</section>');

  if (r.warnings.length > 0) {
    out.push(`<section id="warnings"><h2>Warnings (${r.warnings.length})</h2><ul class="warnings">`);
    for (const w of r.warnings) out.push(`<li>${escapeHtml(w)}</li>`);
    out.push('</ul></section>');
  }

  if (r.figures.length > 0) {
    out.push('<section id="figures"><h2>Figures</h2>');
    r.figures.forEach((f, i) => {
      // prefix the figure's internal ids (clip paths, patterns) with the figure id so they stay unique on the page
      const svg = checkSvg(f.id, f.svg).replace(/\bisotrap-([0-9a-f]{8})\b/g, `${f.id}--isotrap-$1`);
      out.push(`<figure id="${escapeHtml(f.id)}">`);
      out.push(svg);
      out.push(`<figcaption><span class="fig-number">Figure ${i + 1}.</span> ${escapeHtml(f.caption)}</figcaption>`);
      out.push('</figure>');
    });
    out.push('</section>');
  }

  out.push('<section id="config"><h2>Configuration</h2>');
  out.push(`<pre class="config">${escapeHtml(r.configText)}</pre>`);
  out.push('</section>');

  out.push('<section id="provenance"><h2>Provenance</h2><dl class="provenance">');
  out.push(`<dt>tool version</dt><dd>${escapeHtml(p.toolVersion)}</dd>`);
  out.push(`<dt>configuration hash</dt><dd>${escapeHtml(p.configHash)}</dd>`);
  out.push(`<dt>date</dt><dd>${escapeHtml(p.date)}</dd>`);
  out.push(`<dt>run time</dt><dd>${escapeHtml(p.runSeconds.toFixed(p.runSeconds < 10 ? 2 : 1))} s</dd>`);
  out.push('</dl></section>');
  out.push('</body>');
  out.push('</html>');
  return out.join('\n') + '\n';
}
