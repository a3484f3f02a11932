/**
 * Reading a potential sequence V(x, λ_k) from elsewhere (for `isotrap check`), and converting it to natural units
 * (ξ = x/ℓ, u = V/E₀, physics.md §3) on the periodic Fourier grid of physics.md §5.
 *
 * Accepted inputs
 *  - `.npy` of shape [frames, points] (float64 or the other dtypes decodeNpy reads), energies in the sequence's
 *    energy unit, with a sidecar giving `x` (points values, length unit) and the frame labels: `lambda`
 *    (KdV time τ in the natural units of ℓ, physics.md §3, as `isotrap design` writes it) and/or `time` (lab
 *    time in the sequence's time unit: ms in lab units, t₀ in natural ones), plus the units. Sidecar search, first hit wins: the `sidecar` option; `<stem>.json`, `<stem>.yaml`,
 *    `<stem>.yml` next to the file; `sequence.json` in the same folder (what `isotrap design` writes).
 *  - `.csv`: x in the first column, then one column per frame. The first row must be a header: any label for
 *    the x column (a unit in parentheses, e.g. `x (µm)`, is read as the length unit), then each frame's λ as
 *    `lambda=0.05`, `λ=0.05` or `0.05`, or its lab time as `time=1.5` or `t=1.5`. Units come from the same sidecar search (its `x`/`lambda`, if
 *    present, must agree with the CSV) and/or from the `units` option.
 *
 * Units (sidecar keys, or the `units` option, which wins over the sidecar):
 *    length_unit    "ℓ" (natural) or "µm" (lab); ASCII spellings "l", "ell", "um" are accepted
 *    energy_unit    "E₀" (natural) or "h·kHz" / "µK" (lab); ASCII "E0", "h*kHz", "uK" are accepted
 *    species        lab only: a species name (Rb87) or label (⁸⁷Rb); or give
 *    mass_u         lab only: the particle mass in u (wins over species)
 *    length_unit_um lab only: the natural length unit ℓ in µm used inside the check (default 1)
 * A natural sequence needs ℓ with E₀; a lab one needs µm with h·kHz or µK and a mass.
 *
 * x must be strictly increasing and uniform (x_j = x_0 + j·dx to X_UNIFORM_RTOL·dx): it is one period
 * x_0 … x_0 + L − dx of the periodic box of length L = n·dx. Any count n works: when n is not a power of two the
 * frames are interpolated spectrally (band-limited, spectral/resample-any.ts) onto the next power of two of the
 * same box, and a warning says so.
 */
import { existsSync, statSync } from 'node:fs';
import { basename, dirname, extname, join } from 'node:path';
import { parse as parseYaml } from 'yaml';
import { UserError } from '../core/errors.ts';
import { readNumericCsv } from './csv.ts';
import { decodeNpy } from './npy.ts';
import { ATOMIC_MASS_CONSTANT } from '../units/constants.ts';
import { makeUnitSystem, type UnitSystem } from '../units/scales.ts';
import { SPECIES, SPECIES_NAMES, isSpeciesName } from '../units/species.ts';
import { isPowerOfTwo, makeGrid, type Grid } from '../spectral/grid.ts';
import { nextPowerOfTwo, resampleToPowerOfTwo } from '../spectral/resample-any.ts';
import { readBoundedFile } from './files.ts';

/** largest sidecar read (its x, λ and time lists of even the finest grids fit many times over; common practice) */
const MAX_SIDECAR_BYTES = 64 * 2 ** 20;
/** largest sequence file read: 512 MiB holds 1000 frames of 65,536 float64 points (common practice) */
const MAX_SEQUENCE_BYTES = 512 * 2 ** 20;

/** fewest frames: one interval for the flow fit */
export const MIN_FRAMES = 2;
/** fewest grid points: below this no well is resolved by a Fourier grid (common practice) */
export const MIN_POINTS = 16;
/** x may deviate from x_0 + j·dx by this fraction of dx: admits x printed with ~7 significant digits, far
 * below any genuinely non-uniform sampling */
export const X_UNIFORM_RTOL = 1e-6;
/** a last sample equal to the first to this fraction of the frame's peak marks a repeated period end point (round-off of printed values) */
const PERIOD_REPEAT_RTOL = 1e-12;
/** sidecar x / λ must agree with the CSV's to this relative tolerance (printed values, common practice) */
const SIDECAR_MATCH_RTOL = 1e-9;
/** species mass and mass_u in one sidecar must agree to this (AME2020 tabulation precision, 1e-9 u) */
const MASS_MATCH_RTOL = 1e-8;

export type LengthUnit = 'µm' | 'ℓ';
export type EnergyUnitLabel = 'h·kHz' | 'µK' | 'E₀';

/** units of a sequence as given by the user (sidecar or options); all optional until resolved */
export interface SequenceUnitsInput {
  length_unit?: string;
  energy_unit?: string;
  species?: string | null;
  mass_u?: number | null;
  length_unit_um?: number | null;
}

export interface SequenceUnits {
  readonly length_unit: LengthUnit;
  readonly energy_unit: EnergyUnitLabel;
  /** species label, or null (natural units or mass given directly) */
  readonly species: string | null;
  readonly mass_u: number | null;
  /** ℓ in µm (lab), null in natural units */
  readonly length_unit_um: number | null;
}

export interface ReadSequenceOptions {
  /** explicit sidecar path (JSON or YAML) */
  sidecar?: string;
  /** units given on the command line; they win over the sidecar */
  units?: SequenceUnitsInput;
}

export interface Sequence {
  /** the file read */
  readonly file: string;
  /** the sidecar used, or null */
  readonly sidecar: string | null;
  readonly format: 'npy' | 'csv';
  readonly units: SequenceUnits;
  readonly system: UnitSystem;
  /** positions in the user's length unit, as read (grid.n may be larger: frames resampled onto a power of two) */
  readonly xUser: Float64Array;
  /** λ (KdV time τ in the natural units of ℓ) of each frame, strictly increasing; null when only `time` is given */
  readonly lambda: number[] | null;
  /** lab time of each frame in the sequence's time unit (ms or t₀), strictly increasing; null when not given */
  readonly time: number[] | null;
  /** natural-units grid of the periodic box (length N·dx/ℓ); grid.x is shifted from ξ by `offset` */
  readonly grid: Grid;
  /** ξ_0 − grid.x[0]: the box's true origin in ℓ (spectral operators do not depend on it) */
  readonly offset: number;
  /** u(ξ_j, λ_k) = V/E₀, one Float64Array per frame */
  readonly frames: Float64Array[];
  readonly warnings: string[];
}

// ---------------------------------------------------------------------------------------------- units

const LENGTH_SPELLINGS: Record<string, LengthUnit> = { 'µm': 'µm', um: 'µm', micrometre: 'µm', micrometer: 'µm', 'ℓ': 'ℓ', l: 'ℓ', ell: 'ℓ' };
const ENERGY_SPELLINGS: Record<string, EnergyUnitLabel> = {
  'h·kHz': 'h·kHz', 'h*kHz': 'h·kHz', 'h kHz': 'h·kHz', hkHz: 'h·kHz', 'h×kHz': 'h·kHz',
  'µK': 'µK', uK: 'µK',
  'E₀': 'E₀', E0: 'E₀', 'E_0': 'E₀',
};
const LENGTH_ALLOWED = '"µm" (lab; also "um") or "ℓ" (natural; also "l", "ell")';
const ENERGY_ALLOWED = '"h·kHz" or "µK" (lab; also "h*kHz", "uK") or "E₀" (natural; also "E0")';

/** the Greek letter mu (U+03BC) and the micro sign (U+00B5) look alike: accept both */
function normaliseMicro(s: string): string {
  return s.trim().replace(/\u03bc/g, '\u00b5');
}

function parseLengthUnit(v: string, where: string): LengthUnit {
  const u = LENGTH_SPELLINGS[normaliseMicro(v)];
  if (!u) throw new UserError(`${where}: length_unit = ${JSON.stringify(v)} is not allowed: must be ${LENGTH_ALLOWED}`);
  return u;
}

function parseEnergyUnit(v: string, where: string): EnergyUnitLabel {
  const u = ENERGY_SPELLINGS[normaliseMicro(v)];
  if (!u) throw new UserError(`${where}: energy_unit = ${JSON.stringify(v)} is not allowed: must be ${ENERGY_ALLOWED}`);
  return u;
}

/** species name (Rb87) or label (⁸⁷Rb) → mass in u, or null when not in the table */
function speciesMassOf(species: string): { massU: number; label: string } | null {
  const s = species.trim();
  if (isSpeciesName(s)) return { massU: SPECIES[s].massU, label: SPECIES[s].label };
  for (const name of SPECIES_NAMES) if (SPECIES[name].label === s) return { massU: SPECIES[name].massU, label: s };
  return null;
}

/**
 * Resolve units from sidecar values and command-line values (the latter win), naming `where` in messages.
 * Every missing or inconsistent unit gives a UserError saying what to add.
 */
export function resolveUnits(fromSidecar: SequenceUnitsInput, fromOptions: SequenceUnitsInput, where: string): SequenceUnits {
  const pick = <K extends keyof SequenceUnitsInput>(k: K): SequenceUnitsInput[K] => (fromOptions[k] !== undefined && fromOptions[k] !== null ? fromOptions[k] : fromSidecar[k]);
  const lengthRaw = pick('length_unit');
  const energyRaw = pick('energy_unit');
  const how = 'give it in a sidecar (<name>.json/.yaml next to the file, keys length_unit, energy_unit, species or mass_u) or on the command line';
  if (lengthRaw === undefined || lengthRaw === null) throw new UserError(`${where}: units missing: no length_unit (${LENGTH_ALLOWED}); ${how}`);
  if (energyRaw === undefined || energyRaw === null) throw new UserError(`${where}: units missing: no energy_unit (${ENERGY_ALLOWED}); ${how}`);
  const length = parseLengthUnit(String(lengthRaw), where);
  const energy = parseEnergyUnit(String(energyRaw), where);
  if (length === 'ℓ' || energy === 'E₀') {
    if (!(length === 'ℓ' && energy === 'E₀')) {
      throw new UserError(`${where}: length_unit = "${length}" with energy_unit = "${energy}" is not allowed: natural units need "ℓ" with "E₀", lab units "µm" with "h·kHz" or "µK"`);
    }
    return { length_unit: 'ℓ', energy_unit: 'E₀', species: null, mass_u: null, length_unit_um: null };
  }
  const speciesRaw = pick('species');
  const massRaw = pick('mass_u');
  let massU: number;
  let label: string | null = null;
  if (massRaw !== undefined && massRaw !== null) {
    if (typeof massRaw !== 'number' || !Number.isFinite(massRaw) || !(massRaw > 0)) {
      throw new UserError(`${where}: mass_u = ${JSON.stringify(massRaw)} is not allowed: must be a finite number > 0 (mass in u)`);
    }
    massU = massRaw;
    if (typeof speciesRaw === 'string') {
      const known = speciesMassOf(speciesRaw);
      label = known ? known.label : speciesRaw;
      if (known && Math.abs(known.massU - massU) > MASS_MATCH_RTOL * massU && fromOptions.mass_u === undefined) {
        throw new UserError(`${where}: species = ${JSON.stringify(speciesRaw)} (${known.massU} u) contradicts mass_u = ${massU}: give one of them`);
      }
    }
  } else if (typeof speciesRaw === 'string') {
    const known = speciesMassOf(speciesRaw);
    if (!known) {
      throw new UserError(`${where}: species = ${JSON.stringify(speciesRaw)} is not allowed: must be one of ${SPECIES_NAMES.join(', ')} (or their labels), or give mass_u in u`);
    }
    massU = known.massU;
    label = known.label;
  } else {
    throw new UserError(`${where}: units missing: lab units (${length}, ${energy}) need the particle mass: give species (one of ${SPECIES_NAMES.join(', ')}) or mass_u (in u); ${how}`);
  }
  const ellRaw = pick('length_unit_um');
  let ell = 1;
  if (ellRaw !== undefined && ellRaw !== null) {
    if (typeof ellRaw !== 'number' || !Number.isFinite(ellRaw) || !(ellRaw > 0)) {
      throw new UserError(`${where}: length_unit_um = ${JSON.stringify(ellRaw)} is not allowed: must be a finite number > 0 (ℓ in µm)`);
    }
    ell = ellRaw;
  }
  return { length_unit: 'µm', energy_unit: energy, species: label, mass_u: massU, length_unit_um: ell };
}

/** the unit system (conversions to natural units) of resolved sequence units */
export function unitSystemOfSequence(u: SequenceUnits): UnitSystem {
  if (u.length_unit === 'ℓ') return makeUnitSystem({ system: 'natural' });
  return makeUnitSystem({
    system: 'lab',
    massKg: (u.mass_u as number) * ATOMIC_MASS_CONSTANT,
    lengthUnitUm: u.length_unit_um ?? 1,
    energy: u.energy_unit === 'µK' ? 'uK' : 'h*kHz',
  });
}

// -------------------------------------------------------------------------------------------- sidecar

interface Sidecar {
  path: string;
  x: Float64Array | null;
  lambda: number[] | null;
  time: number[] | null;
  units: SequenceUnitsInput;
}

function findSidecar(file: string, explicit: string | undefined): string | null {
  if (explicit !== undefined) {
    if (!existsSync(explicit)) throw new UserError(`sidecar file ${explicit} does not exist`);
    return explicit;
  }
  const dir = dirname(file);
  const stem = basename(file, extname(file));
  for (const name of [`${stem}.json`, `${stem}.yaml`, `${stem}.yml`, 'sequence.json']) {
    const p = join(dir, name);
    if (existsSync(p) && statSync(p).isFile()) return p;
  }
  return null;
}

function numberArray(v: unknown, key: string, path: string): Float64Array {
  if (!Array.isArray(v)) throw new UserError(`${path}: ${key} must be a list of numbers, got ${v === null ? 'null' : typeof v}`);
  const out = new Float64Array(v.length);
  v.forEach((e, i) => {
    if (typeof e !== 'number' || !Number.isFinite(e)) {
      throw new UserError(`${path}: ${key}[${i}] = ${JSON.stringify(e)} is not allowed: must be a finite number`);
    }
    out[i] = e;
  });
  return out;
}

function optionalString(v: unknown, key: string, path: string): string | undefined {
  if (v === undefined || v === null) return undefined;
  if (typeof v !== 'string') throw new UserError(`${path}: ${key} = ${JSON.stringify(v)} is not allowed: must be a string`);
  return v;
}

function optionalNumber(v: unknown, key: string, path: string): number | undefined {
  if (v === undefined || v === null) return undefined;
  if (typeof v !== 'number') throw new UserError(`${path}: ${key} = ${JSON.stringify(v)} is not allowed: must be a number`);
  return v;
}

function readSidecar(path: string): Sidecar {
  const text = readBoundedFile(path, MAX_SIDECAR_BYTES, 'sidecar').toString('utf8');
  let data: unknown;
  const ext = extname(path).toLowerCase();
  try {
    data = ext === '.yaml' || ext === '.yml' ? parseYaml(text) : JSON.parse(text);
  } catch (err) {
    throw new UserError(`${path}: cannot parse the sidecar as ${ext === '.json' ? 'JSON' : 'YAML'}: ${(err as Error).message}`);
  }
  if (typeof data !== 'object' || data === null || Array.isArray(data)) {
    throw new UserError(`${path}: the sidecar must be a mapping with keys x, lambda, length_unit, energy_unit, species/mass_u`);
  }
  const d = data as Record<string, unknown>;
  return {
    path,
    x: d.x === undefined ? null : numberArray(d.x, 'x', path),
    lambda: d.lambda === undefined ? null : Array.from(numberArray(d.lambda, 'lambda', path)),
    time: d.time === undefined ? null : Array.from(numberArray(d.time, 'time', path)),
    units: {
      length_unit: optionalString(d.length_unit, 'length_unit', path),
      energy_unit: optionalString(d.energy_unit, 'energy_unit', path),
      species: optionalString(d.species, 'species', path),
      mass_u: optionalNumber(d.mass_u, 'mass_u', path),
      length_unit_um: optionalNumber(d.length_unit_um, 'length_unit_um', path),
    },
  };
}

// --------------------------------------------------------------------------------------------- checks

/**
 * x strictly increasing and uniform: returns x_0 and dx (dx from the end points, so printed round-off does not
 * accumulate). `rowName(j)` names sample j in messages.
 */
export function checkPeriodicX(x: Float64Array, file: string, rowName: (j: number) => string): { x0: number; dx: number } {
  const n = x.length;
  if (n < MIN_POINTS) throw new UserError(`${file}: x has ${n} points, at least ${MIN_POINTS} are needed`);
  for (let j = 0; j + 1 < n; j++) {
    if (!(x[j + 1] > x[j])) throw new UserError(`${file}: x is not strictly increasing at ${rowName(j + 1)} (x = ${x[j + 1]} after ${x[j]})`);
  }
  const x0 = x[0];
  const dx = (x[n - 1] - x0) / (n - 1);
  for (let j = 0; j < n; j++) {
    const expected = x0 + j * dx;
    if (Math.abs(x[j] - expected) > X_UNIFORM_RTOL * dx) {
      throw new UserError(
        `${file}: x is not uniformly spaced: ${rowName(j)} has x = ${x[j]}, the uniform grid x₀ + j·dx (x₀ = ${x0}, dx = ${dx}) ` +
          `puts it at ${expected}; the check needs a uniform periodic grid (allowed deviation ${X_UNIFORM_RTOL}·dx): resample the sequence first`,
      );
    }
  }
  return { x0, dx };
}

/** frame labels (λ or lab time, `symbol` in messages) must be finite and strictly increasing */
function checkLabels(labels: readonly number[], symbol: string, file: string, name: (k: number) => string): void {
  if (labels.length < MIN_FRAMES) {
    throw new UserError(`${file}: has ${labels.length} frame${labels.length === 1 ? '' : 's'}, at least ${MIN_FRAMES} are needed for one interval of the flow fit`);
  }
  for (let k = 0; k < labels.length; k++) {
    if (!Number.isFinite(labels[k])) throw new UserError(`${file}: ${name(k)} has ${symbol} = ${labels[k]}: must be a finite number`);
    if (k > 0 && !(labels[k] > labels[k - 1])) {
      throw new UserError(`${file}: ${symbol} must increase strictly from frame to frame: ${name(k)} has ${symbol} = ${labels[k]} after ${labels[k - 1]}`);
    }
  }
}

function matches(a: ArrayLike<number>, b: ArrayLike<number>, rtol: number): number {
  let scale = 0;
  for (let i = 0; i < a.length; i++) scale = Math.max(scale, Math.abs(a[i]));
  for (let i = 0; i < a.length; i++) if (Math.abs(a[i] - b[i]) > rtol * Math.max(scale, 1e-300)) return i;
  return -1;
}

/** a frame label from a CSV header cell: `lambda=0.05`, `λ=0.05`, `lambda = 0.05`, `time=1.5`, `t=1.5` or a bare number (λ) */
const LABEL_HEADER_RE = /^(?:(lambda|λ|time|t)\s*=\s*)?([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)$/i;
/** unit in parentheses or brackets in the x header, e.g. `x (µm)`, `x [um]` */
const X_UNIT_RE = /[([]\s*([^)\]]+?)\s*[)\]]/;

// ---------------------------------------------------------------------------------------------- read

/** what a .npy or .csv file gives before units are applied */
interface RawSequence {
  xUser: Float64Array;
  lambda: number[] | null;
  time: number[] | null;
  values: Float64Array[];
  /** names sample j of x in messages */
  rowName: (j: number) => string;
  /** length unit read from the CSV's x header, if any */
  headerLength?: LengthUnit;
}

/** a .npy array [frames, points] with x and λ from its sidecar */
function readNpySequence(file: string, ext: string, sidecar: Sidecar | null): RawSequence {
  const buf = readBoundedFile(file, MAX_SEQUENCE_BYTES, 'sequence file');
  const arr = decodeNpy(new Uint8Array(buf.buffer, buf.byteOffset, buf.byteLength), file);
  if (arr.shape.length !== 2) {
    throw new UserError(`${file}: array shape (${arr.shape.join(', ')}) is not allowed: must be 2-D [frames, points]`);
  }
  const [nF, nP] = arr.shape;
  if (!sidecar) {
    throw new UserError(`${file}: no sidecar found (looked for ${basename(file, ext)}.json/.yaml/.yml and sequence.json next to it): a .npy sequence needs x, lambda and units from a sidecar`);
  }
  if (!sidecar.x) throw new UserError(`${sidecar.path}: key x (the ${nP} positions, length unit) is missing`);
  if (!sidecar.lambda && !sidecar.time) throw new UserError(`${sidecar.path}: the frame labels are missing: give lambda (the ${nF} frame λ values, KdV time in the natural units of ℓ) or time (the ${nF} lab times)`);
  if (sidecar.x.length !== nP) throw new UserError(`${sidecar.path}: x has ${sidecar.x.length} values but ${file} has ${nP} points per frame (shape [${nF}, ${nP}])`);
  const rowName = (k: number) => `frame ${k} (row ${k} of the array, counted from 0)`;
  for (const [key, labels, symbol] of [['lambda', sidecar.lambda, 'λ'], ['time', sidecar.time, 'time']] as const) {
    if (!labels) continue;
    if (labels.length !== nF) throw new UserError(`${sidecar.path}: ${key} has ${labels.length} values but ${file} has ${nF} frames (shape [${nF}, ${nP}])`);
    checkLabels(labels, symbol, file, rowName);
  }
  return {
    xUser: sidecar.x,
    lambda: sidecar.lambda,
    time: sidecar.time,
    values: Array.from({ length: nF }, (_, k) => arr.data.slice(k * nP, (k + 1) * nP)),
    rowName: (j) => `${sidecar.path} x[${j}]`,
  };
}

/** a sidecar's x and λ, when present, must agree with the CSV's */
function checkSidecarAgrees(file: string, sidecar: Sidecar | null, raw: RawSequence): void {
  if (sidecar?.x) {
    if (sidecar.x.length !== raw.xUser.length) throw new UserError(`${sidecar.path}: x has ${sidecar.x.length} values but ${file} has ${raw.xUser.length} rows`);
    const bad = matches(raw.xUser, sidecar.x, SIDECAR_MATCH_RTOL);
    if (bad >= 0) throw new UserError(`${file}: ${raw.rowName(bad)} has x = ${raw.xUser[bad]} but ${sidecar.path} has x[${bad}] = ${sidecar.x[bad]}`);
  }
  for (const [key, own, side, symbol] of [['lambda', raw.lambda, sidecar?.lambda, 'λ'], ['time', raw.time, sidecar?.time, 'time']] as const) {
    if (!side || !sidecar) continue;
    if (side.length !== raw.values.length) throw new UserError(`${sidecar.path}: ${key} has ${side.length} values but ${file} has ${raw.values.length} frame columns`);
    if (!own) continue;
    const bad = matches(own, side, SIDECAR_MATCH_RTOL);
    if (bad >= 0) throw new UserError(`${file}: column ${bad + 2} has ${symbol} = ${own[bad]} but ${sidecar.path} has ${key}[${bad}] = ${side[bad]}`);
  }
}

/** a .csv with x in column 1 and one column per frame, λ in the header */
function readCsvSequence(file: string, sidecar: Sidecar | null): RawSequence {
  const csv = readNumericCsv(readBoundedFile(file, MAX_SEQUENCE_BYTES, 'sequence file').toString('utf8'), file);
  const header = csv.header;
  if (!header) {
    throw new UserError(`${file}: the first row must be a header: a label for the x column, then each frame's λ, e.g. "x (µm),lambda=0,lambda=0.05,…"`);
  }
  const width = csv.columns.length;
  if (width < 1 + MIN_FRAMES) {
    throw new UserError(`${file}: has ${width - 1} frame column${width === 2 ? '' : 's'}, at least ${MIN_FRAMES} are needed for one interval of the flow fit (x in column 1, one column per frame)`);
  }
  const labels: number[] = [];
  const kinds = new Set<'lambda' | 'time'>();
  for (let c = 1; c < width; c++) {
    const cell = header[c];
    const m = LABEL_HEADER_RE.exec(cell.trim());
    if (!m) throw new UserError(`${file}: column ${c + 1} header ${JSON.stringify(cell)} is not a frame label: write "lambda=0.05", "λ=0.05", "0.05" (λ) or "time=1.5", "t=1.5" (lab time)`);
    kinds.add(m[1] !== undefined && /^t/i.test(m[1]) ? 'time' : 'lambda');
    labels.push(Number(m[2]));
  }
  if (kinds.size > 1) throw new UserError(`${file}: the frame headers mix λ and lab time: label every frame column the same way`);
  const byTime = kinds.has('time') || (sidecar?.time !== null && sidecar?.time !== undefined && !sidecar.lambda && header.slice(1).every((h) => !/=/.test(h)));
  const unit = X_UNIT_RE.exec(header[0]);
  const headerLength = unit ? LENGTH_SPELLINGS[normaliseMicro(unit[1])] : undefined;
  const raw: RawSequence = {
    xUser: csv.columns[0],
    lambda: byTime ? sidecar?.lambda ?? null : labels,
    time: byTime ? labels : sidecar?.time ?? null,
    values: csv.columns.slice(1),
    rowName: (j) => `row ${csv.lines[j]}`,
    headerLength,
  };
  checkLabels(labels, byTime ? 'time' : 'λ', file, (k) => `column ${k + 2} (header ${JSON.stringify(header[k + 1])})`);
  checkSidecarAgrees(file, sidecar, raw);
  return raw;
}

/** Read a sequence file (see module doc) into natural units. Every malformed input gives a UserError. */
export function readSequence(file: string, opts: ReadSequenceOptions = {}): Sequence {
  if (!existsSync(file)) throw new UserError(`sequence file ${file} does not exist`);
  if (!statSync(file).isFile()) throw new UserError(`sequence file ${file} is not a regular file`);
  const ext = extname(file).toLowerCase();
  if (ext !== '.npy' && ext !== '.csv') {
    throw new UserError(`sequence file ${file} has extension ${JSON.stringify(ext)}: allowed are .npy (with a sidecar) and .csv`);
  }
  const sidecarPath = findSidecar(file, opts.sidecar);
  const sidecar = sidecarPath ? readSidecar(sidecarPath) : null;
  const raw = ext === '.npy' ? readNpySequence(file, ext, sidecar) : readCsvSequence(file, sidecar);

  const where = sidecar ? `${file} (sidecar ${sidecar.path})` : file;
  const fromSidecar: SequenceUnitsInput = { ...(sidecar?.units ?? {}) };
  if (raw.headerLength !== undefined) {
    const other = fromSidecar.length_unit ?? opts.units?.length_unit;
    if (other !== undefined && other !== null && parseLengthUnit(other, where) !== raw.headerLength) {
      throw new UserError(`${file}: the x header says the length unit is ${raw.headerLength}, but length_unit = ${JSON.stringify(other)} was given: make them agree`);
    }
    fromSidecar.length_unit ??= raw.headerLength;
  }
  const units = resolveUnits(fromSidecar, opts.units ?? {}, where);
  const system = unitSystemOfSequence(units);
  const { xUser, lambda, time } = raw;
  const { x0, dx } = checkPeriodicX(xUser, file, raw.rowName);
  const n = xUser.length;
  const warnings: string[] = [];
  if (!isPowerOfTwo(n)) {
    if (isPowerOfTwo(n - 1) && raw.values.every((col) => Math.abs(col[0] - col[n - 1]) <= PERIOD_REPEAT_RTOL * Math.max(...Array.from(col, Math.abs)))) {
      throw new UserError(`${file}: x has ${n} points and every frame ends on its first value: if the last point repeats the first point of the period (x₀ + L), drop it`);
    }
    warnings.push(`x has ${n} points: the frames were interpolated spectrally (band-limited, periodic box of length ${n}·dx) onto ${nextPowerOfTwo(n)} points for the flow`);
  }
  const points = isPowerOfTwo(n) ? n : nextPowerOfTwo(n);
  const grid = makeGrid(system.lengthToNatural(n * dx), points);
  const offset = system.lengthToNatural(x0) - grid.x[0];
  const frames = raw.values.map((col) => {
    const u = new Float64Array(n);
    for (let j = 0; j < n; j++) u[j] = system.energyToNatural(col[j]);
    return points === n ? u : resampleToPowerOfTwo(u, points);
  });
  return { file, sidecar: sidecar?.path ?? null, format: ext === '.npy' ? 'npy' : 'csv', units, system, xUser, lambda, time, grid, offset, frames, warnings };
}
