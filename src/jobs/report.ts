/**
 * Figures and the HTML report of a finished output folder, rendered from its files only (sequence.json,
 * potential.npy and, when present, verify.json and traces.npy; or, for a check folder, check.json, input.npy and
 * repaired.npy), so `isotrap report DIR` never recomputes.
 * Files are read through the validated readers of io/formats; the figures come from report/panels.
 */
import { createHash } from 'node:crypto';
import { existsSync } from 'node:fs';
import { basename, join } from 'node:path';
import { UserError } from '../core/errors.ts';
import { stringify } from 'yaml';
import type { SummaryRow } from '../io/formats/read.ts';
import { readCheckFile } from '../io/formats/check.ts';
import { checkRequestText } from './check.ts';
import { readNpyFile } from '../io/formats/read.ts';
import { readSequenceFile, type SequenceFile } from '../io/formats/sequence.ts';
import { readVerifyFile, type VerifyFile } from '../io/formats/verify.ts';
import { prepareOutputDir, writeFileAtomic } from '../io/files.ts';
import { requireOneConfig, verifiedEntries, writeRun, type ManifestEntry } from '../io/run-folder.ts';
import { renderReport, type FigureSize, type ReportFigure } from '../report/index.ts';
import { designFigures, designSummaryRows, labTimeMap, type FrameArray } from '../report/panels/design.ts';
import { latticeFigures, latticeSummaryRows } from '../report/panels/lattice.ts';
import { readLatticeFile } from '../io/formats/lattice.ts';
import { checkFigures, checkSummaryRows } from '../report/panels/check.ts';
import { verifyFigures } from '../report/panels/verify.ts';
import { exportFigures, exportSummaryRows, type ExportSeries } from '../report/panels/export.ts';
import { PAINTED_EXPORT_DRIVES, readExportFile, type ExportFile, type PaintedExportDrive } from '../io/formats/export.ts';
import { EXPORT_FIGURE_IDS, EXPORT_JSON, EXPORT_NPY, PAINTED_FIGURE_IDS, PAINTED_NPY } from './export.ts';

export { compareFigures } from '../report/panels/compare.ts';
/** the compare.json content the compare figures read */

/** each figure as DIR/<id>.svg (atomically), after the caller prepared the folder */
function writeSvgs(figures: ReportFigure[], dir: string): string[] {
  return figures.map((f) => {
    const p = join(dir, `${f.id}.svg`);
    writeFileAtomic(p, f.svg);
    return p;
  });
}

/** write figures into dir (atomically; refuses to overwrite without force) */
export function writeFigures(figures: ReportFigure[], dir: string, force: boolean): string[] {
  prepareOutputDir(dir, { force, produces: figures.map((f) => `${f.id}.svg`) });
  return writeSvgs(figures, dir);
}

export interface ReportOptions {
  force: boolean;
  runSeconds?: number;
  toolVersion: string;
  /** figure size (report/style.ts): paper (default) or slides */
  figures?: FigureSize;
  /** the lattice results of a folder that also holds a design (default: sequence.json, else check.json, else lattice.json) */
  kind?: 'lattice';
}

/** the files of a finished output folder that the report reads */
interface OutputFolder {
  exported: { file: ExportFile; series: ExportSeries; painted: Partial<Record<PaintedExportDrive, FrameArray>> } | null;
  seq: SequenceFile;
  potential: FrameArray;
  verify: VerifyFile | null;
  traces: FrameArray | null;
  sources: Sources;
}

/** the files a report renders and the manifest entries they had when read */
interface Sources {
  names: string[];
  entries: ManifestEntry[];
}

/** read the manifest entries of `names`, all of one configuration (io/run-folder.ts) */
function readSources(dir: string, names: string[]): Sources {
  return { names, entries: requireOneConfig(dir, names) };
}

function readFolder(dir: string): OutputFolder {
  const hasVerify = existsSync(join(dir, 'verify.json'));
  // every file read must be the one its run recorded, and all of one configuration (io/run-folder.ts)
  const hasExport = hasVerify && existsSync(join(dir, EXPORT_JSON));
  const sources = readSources(dir, ['sequence.json', 'potential.npy', ...(hasVerify ? ['verify.json', 'traces.npy'] : []), ...(hasExport ? [EXPORT_JSON, ...EXPORT_FIGURE_ARRAYS.map((k) => EXPORT_NPY[k]), ...Object.values(PAINTED_NPY)] : [])].filter((f) => existsSync(join(dir, f))));
  const seq = readSequenceFile(join(dir, 'sequence.json'));
  const potential = readNpyFile(join(dir, 'potential.npy'));
  if (!hasVerify) return { seq, potential, verify: null, traces: null, sources, exported: null };
  const exported = hasExport ? readExport(dir) : null;
  const verify = readVerifyFile(join(dir, 'verify.json'));
  const file = verify.traces.file;
  if (basename(file) !== file || file.startsWith('.')) {
    throw new UserError(`${join(dir, 'verify.json')}: traces.file = ${JSON.stringify(file)} is not allowed: must name a file inside the folder`);
  }
  const tp = join(dir, file);
  return { seq, potential, verify, traces: existsSync(tp) ? readNpyFile(tp) : null, sources, exported };
}

/** the arrays of the export figures (report/panels/export.ts) */
const EXPORT_FIGURE_ARRAYS = ['x', 't', 'lambda', 'lambda_rate', 'cubic', 'velocity'] as const;

/** export.json and the arrays its figures read, by the names the sidecar gives */
function readExport(dir: string): { file: ExportFile; series: ExportSeries; painted: Partial<Record<PaintedExportDrive, FrameArray>> } {
  const file = readExportFile(join(dir, EXPORT_JSON));
  const read = (k: (typeof EXPORT_FIGURE_ARRAYS)[number]) => readNpyFile(join(dir, EXPORT_NPY[k]));
  const painted = Object.fromEntries(PAINTED_EXPORT_DRIVES.filter((d) => file.arrays[d]).map((d) => [d, readNpyFile(join(dir, PAINTED_NPY[d]))]));
  return { file, series: { x: read('x'), t: read('t'), lambda: read('lambda'), lambda_rate: read('lambda_rate'), cubic: read('cubic'), velocity: read('velocity') }, painted };
}

function folderFigures(f: OutputFolder, size: FigureSize): ReportFigure[] {
  const figures = designFigures(f.seq, f.potential, size);
  if (f.verify) {
    const lab = labTimeMap(f.seq, f.potential, f.verify, size);
    if (lab) figures.push(lab);
    figures.push(...verifyFigures(f.verify, f.traces, size));
  }
  if (f.exported) figures.push(...exportFigures(f.exported.file, f.exported.series, f.exported.painted, size));
  return figures;
}

/** compute time recorded in the folder's own files (design integrator + verify), when no run time is given */
function recordedSeconds(f: OutputFolder): number {
  const finite = (s: number | undefined): number => (s !== undefined && Number.isFinite(s) ? s : 0);
  const total = finite(f.seq.summary.integrator.seconds) + finite(f.verify?.seconds);
  return Number.isFinite(total) && total >= 0 ? total : 0;
}

/** the page around the figures, with provenance hashed from the configuration text shown */
function pageHtml(title: string, summaryRows: SummaryRow[], figures: ReportFigure[], configText: string, runSeconds: number, warnings: string[], opts: ReportOptions): string {
  return renderReport({
    title,
    summaryRows,
    figures,
    configText,
    provenance: {
      toolVersion: opts.toolVersion,
      configHash: createHash('sha256').update(configText).digest('hex').slice(0, 16),
      date: new Date().toISOString(),
      runSeconds,
    },
    warnings,
  });
}

function folderHtml(f: OutputFolder, figures: ReportFigure[], opts: ReportOptions): string {
  const summary = [...designSummaryRows(f.seq), ...(f.verify?.summary_rows ?? []), ...(f.exported ? exportSummaryRows(f.exported.file) : [])];
  const warnings = [...f.seq.summary.warnings, ...(f.verify?.warnings ?? [])];
  return pageHtml(`isotrap report: ${f.seq.summary.name}`, summary, figures, stringify(f.seq.config), opts.runSeconds ?? recordedSeconds(f), warnings, opts);
}

/** the figures and page of a check folder (check.json, input.npy, repaired.npy) */
function checkFolder(dir: string, opts: ReportOptions): { figures: ReportFigure[]; html: string; sources: Sources } {
  const sources = readSources(dir, ['check.json', 'input.npy', 'repaired.npy']);
  const r = readCheckFile(join(dir, 'check.json'));
  const figures = checkFigures(r, readNpyFile(join(dir, 'input.npy')), readNpyFile(join(dir, 'repaired.npy')), opts.figures);
  const configText = checkRequestText(r);
  return { figures, html: pageHtml(`isotrap check: ${r.input}`, checkSummaryRows(r), figures, configText, opts.runSeconds ?? 0, r.warnings, opts), sources };
}

/** the figures and page of a lattice folder (lattice.json and the arrays the figures read) */
function latticeFolder(dir: string, opts: ReportOptions): { figures: ReportFigure[]; html: string; sources: Sources } {
  const sources = readSources(dir, ['lattice.json', 'sites.npy', 'times.npy', 'nn_amplitude.npy']);
  const s = readLatticeFile(join(dir, 'lattice.json'));
  const [sites, times, nn] = ['sites.npy', 'times.npy', 'nn_amplitude.npy'].map((f) => readNpyFile(join(dir, f)).data);
  const figures = latticeFigures(s, { sites, times, nnAmplitude: nn }, opts.figures);
  const seconds = s.verification.seconds + s.study.rows.reduce((t, r) => t + r.seconds, 0);
  return { figures, html: pageHtml(`isotrap lattice: ${s.name}`, latticeSummaryRows(s), figures, stringify(s.config), opts.runSeconds ?? seconds, s.warnings, opts), sources };
}

/**
 * Render all figures of an output folder (design/verify, check or lattice) into DIR/*.svg and DIR/report.html as one
 * commit of the rendered run (io/run-folder.ts); under the folder's lock the sources are checked again, so a run
 * that committed while the report was being rendered is never mixed with it. Returns the files written.
 */
export function renderFolder(dir: string, opts: ReportOptions): string[] {
  let figures: ReportFigure[];
  let html: () => string;
  let sources: Sources;
  const has = (f: string) => existsSync(join(dir, f));
  const lattice = opts.kind === 'lattice' || (!has('sequence.json') && !has('check.json') && has('lattice.json'));
  if (lattice || (!has('sequence.json') && has('check.json'))) {
    const c = lattice ? latticeFolder(dir, opts) : checkFolder(dir, opts);
    figures = c.figures;
    html = () => c.html;
    sources = c.sources;
  } else {
    const folder = readFolder(dir);
    figures = folderFigures(folder, opts.figures ?? 'paper');
    html = () => folderHtml(folder, figures, opts);
    sources = folder.sources;
  }
  const first = sources.entries[0];
  // the export's figures are the export's own files (jobs/export.ts): the page shows them, the report leaves them
  const exported: readonly string[] = [...EXPORT_FIGURE_IDS, ...Object.values(PAINTED_FIGURE_IDS)];
  const own = figures.filter((f) => !exported.includes(f.id));
  const produces = [...own.map((f) => `${f.id}.svg`), 'report.html'];
  return writeRun(dir, { force: opts.force, produces, job: 'report', identity: { run: first.run, configHash: first.config_hash } }, (out) => {
    const now = verifiedEntries(dir, sources.names);
    const changed = sources.names.filter((_, i) => now[i].sha256 !== sources.entries[i].sha256);
    if (changed.length > 0) throw new UserError(`${changed.map((n) => join(dir, n)).join(', ')} changed while the report was rendered (another run committed): run isotrap report ${dir} again`);
    for (const f of own) out.write(`${f.id}.svg`, f.svg);
    out.write('report.html', html());
  });
}
