/**
 * Run configuration: YAML text → validated, defaulted `Config`.
 *
 * Validation uses zod v4 strict objects, so unknown keys anywhere are errors. Every problem becomes one line
 * `<source>: <dotted.key> = <value> is not allowed: <what is allowed>` (or `<source>: <key> is missing: …`),
 * and all problems of a file are collected into a single UserError (exit code 2). YAML syntax errors report
 * `<source>:<line>:<column>`.
 *
 * The returned object is the validated config with a `meta` field added: `config.meta = {source, baseDir}`
 * (source: the name used in messages, baseDir: the folder relative paths were resolved against).
 * For `initial.kind: samples`, `initial.file` is returned resolved to an absolute path.
 *
 * The schema pieces are exported so that further sections can be added with `configSchema.extend({...})`
 * (io/config-compare.ts, io/config-lattice.ts) and read with `parseConfigTextWith` / `loadConfigWith`.
 */
import { existsSync, statSync } from 'node:fs';
import { dirname, isAbsolute, resolve } from 'node:path';
import { parseDocument } from 'yaml';
import { z } from 'zod';
import { SPECIES, SPECIES_CHOICES, type SpeciesChoice } from '../units/species.ts';
import { makeUnitSystem, type EnergyUnit, type UnitSystem } from '../units/scales.ts';
import { ATOMIC_MASS_CONSTANT } from '../units/constants.ts';
import { RAMP_KINDS } from '../protocol/ramp.ts';
import { UserError } from '../core/errors.ts';
import { readBoundedFile } from './files.ts';
import { equalDepthsMessage, settleFlow, targetShapeIssues } from './target.ts';

/** longest rendering of a bad value inside a message (a whole list would drown the message) */
const MAX_VALUE_CHARS = 80;
/** at most this many problems are listed in one message (thousands of unknown keys would make megabytes) */
const MAX_LISTED_PROBLEMS = 20;
/** largest config file read: configs are a few hundred bytes; sample data live in their own files (common practice) */
export const MAX_CONFIG_BYTES = 2 ** 20;
/** YAML aliases resolved at most (the yaml package's default guard against alias expansion bombs) */
const MAX_YAML_ALIASES = 100;
/** atomic masses from the lightest (¹H, 1.008 u) to beyond the heaviest atoms trapped, in u */
const MASS_U_RANGE = [1, 300] as const;
/** the length unit ℓ in µm: from a nanometre to a millimetre, every length scale of a trap for cold atoms (common
 * practice); beyond it the natural units leave double precision's comfortable range */
const LENGTH_UNIT_UM_RANGE = [1e-3, 1e3] as const;
/** grid sizes allowed: powers of two in this range (fft.js needs powers of two; 65536 keeps memory modest) */
export const GRID_POINTS_MIN = 16;
export const GRID_POINTS_MAX = 65536;
/** default flow.tolerance: in the frame of the fastest soliton the split of −6 sech²ξ (N = 1024) meets the closed form
 *  to 2.3e-9 in 1072 steps (measured; 5.6e-9 in 900 at 1e-9, and 4.5e-9 in 3550 lab-frame steps at 1e-9) */
export const FLOW_TOLERANCE_DEFAULT = 5e-10;
/** smallest flow.tolerance: the round-off of one FFT-based step is ~1e-15 of max|u|, so a smaller local error per
 *  step cannot be met in double precision (common practice) */
export const FLOW_TOLERANCE_MIN = 1e-14;
/** smallest verify.tolerance: a fidelity computed in double precision resolves 1 − F only to ~1e-16 (a few ulps of
 *  1), so a time-stepping infidelity budget below ~100 ulps cannot be confirmed (common practice) */
export const VERIFY_TOLERANCE_MIN = 1e-14;

// ---------------------------------------------------------------------------------------------------------
// building blocks: each leaf carries the text of "what is allowed" as its zod error message

/**
 * Strict object whose own errors (not a mapping / unknown key) say which keys are allowed. The key list is read
 * from the schema that raised the issue, so it stays right after `.extend()`.
 */
export function strictSection<S extends z.core.$ZodLooseShape>(shape: S, where: string) {
  return z.strictObject(shape, {
    error: (iss) => {
      const owner = iss.inst as { _zod?: { def?: { shape?: object } } } | undefined;
      const keys = Object.keys(owner?._zod?.def?.shape ?? shape).join(', ');
      return iss.code === 'unrecognized_keys' ? `unknown key; allowed keys in ${where} are ${keys}` : `must be a mapping with keys ${keys}`;
    },
  });
}

/** finite number satisfying `ok`; `allowed` describes the rule */
export function numberWhere(allowed: string, ok: (v: number) => boolean = () => true) {
  return z.number({ error: allowed }).refine(ok, { error: allowed });
}

/** integer in [lo, hi] */
export function intBetween(lo: number, hi: number) {
  const allowed = `must be an integer from ${lo} to ${hi}`;
  return numberWhere(allowed, (v) => Number.isInteger(v) && v >= lo && v <= hi);
}

/** number > 0; `what` names the quantity and its unit */
export function positive(what: string) {
  return numberWhere(`must be a number > 0 (${what})`, (v) => v > 0);
}

function oneOf<const T extends readonly [string, ...string[]]>(values: T) {
  return z.enum(values, { error: `must be one of ${values.join(', ')}` });
}

function isPowerOfTwoInRange(v: number): boolean {
  return Number.isInteger(v) && v >= GRID_POINTS_MIN && v <= GRID_POINTS_MAX && (v & (v - 1)) === 0;
}

const centerSchema = numberWhere('must be a number (position of the centre, in the length unit)').default(0);

// ---------------------------------------------------------------------------------------------------------
// sections

export const NAME_PATTERN = /^[A-Za-z0-9][A-Za-z0-9._-]*$/;
const NAME_RULE = 'must start with a letter or digit and contain only letters, digits, ".", "_" and "-" (it names the output folder outputs/<name>)';
export const nameSchema = z.string({ error: NAME_RULE }).regex(NAME_PATTERN, { error: NAME_RULE });

export const UNIT_SYSTEMS = ['natural', 'lab'] as const;
export const ENERGY_UNITS = ['h*kHz', 'uK'] as const satisfies readonly EnergyUnit[];

export type UnitsConfig =
  | { readonly system: 'natural' }
  | {
      readonly system: 'lab';
      readonly species: SpeciesChoice;
      /** mass in u: the table value for a named species, the given mass_u for custom */
      readonly mass_u: number;
      /** display label, e.g. "⁸⁷Rb" */
      readonly label: string;
      /** length unit ℓ of the KdV variables, µm */
      readonly length_unit_um: number;
      /** unit of every energy in the config and the outputs */
      readonly energy: EnergyUnit;
    };

const unitsShape = {
  system: oneOf(UNIT_SYSTEMS).default('natural'),
  species: oneOf(SPECIES_CHOICES).optional(),
  mass_u: numberWhere(`must be a number from ${MASS_U_RANGE[0]} to ${MASS_U_RANGE[1]} (an atomic mass in u)`, (v) => v >= MASS_U_RANGE[0] && v <= MASS_U_RANGE[1]).optional(),
  length_unit_um: numberWhere(`must be a number from ${LENGTH_UNIT_UM_RANGE[0]} to ${LENGTH_UNIT_UM_RANGE[1]} (the length unit ℓ in µm)`, (v) => v >= LENGTH_UNIT_UM_RANGE[0] && v <= LENGTH_UNIT_UM_RANGE[1]).optional(),
  energy: oneOf(ENERGY_UNITS).optional(),
};

export const unitsSchema = strictSection(unitsShape, 'units')
  .superRefine((u, ctx) => {
    const lab = u.system === 'lab';
    if (!lab) {
      for (const key of ['species', 'mass_u', 'length_unit_um', 'energy'] as const) {
        if (u[key] !== undefined) {
          ctx.addIssue({ code: 'custom', path: [key], message: 'only allowed with units.system: lab (natural units need no mass or lab units)' });
        }
      }
      return;
    }
    if (u.species === undefined) {
      ctx.addIssue({ code: 'custom', path: ['species'], message: `required when units.system is lab: one of ${SPECIES_CHOICES.join(', ')}` });
    } else if (u.species === 'custom' && u.mass_u === undefined) {
      ctx.addIssue({ code: 'custom', path: ['mass_u'], message: 'required when units.species is custom: the mass in u, a number > 0' });
    } else if (u.species !== 'custom' && u.mass_u !== undefined) {
      ctx.addIssue({ code: 'custom', path: ['mass_u'], message: `only allowed with units.species: custom (${u.species} has a tabulated mass)` });
    }
  })
  .transform((u): UnitsConfig => {
    if (u.system === 'natural') return { system: 'natural' };
    const species = u.species as SpeciesChoice;
    const custom = species === 'custom';
    const massU = custom ? (u.mass_u as number) : SPECIES[species].massU;
    return {
      system: 'lab',
      species,
      mass_u: massU,
      label: custom ? `custom (${massU} u)` : SPECIES[species].label,
      length_unit_um: u.length_unit_um ?? 1,
      energy: u.energy ?? 'h*kHz',
    };
  });

/** The unit system of a validated `units` section (mass in kg = mass_u · m_u, CODATA 2018). */
export function unitSystemOf(units: UnitsConfig): UnitSystem {
  if (units.system === 'natural') return makeUnitSystem({ system: 'natural' });
  return makeUnitSystem({
    system: 'lab',
    massKg: units.mass_u * ATOMIC_MASS_CONSTANT,
    lengthUnitUm: units.length_unit_um,
    energy: units.energy,
  });
}

export const gridSchema = strictSection(
  {
    length: positive('box length, in ℓ (natural) or µm (lab)'),
    points: numberWhere(`must be a power of two (${GRID_POINTS_MIN}, 32, …, ${GRID_POINTS_MAX})`, isPowerOfTwoInRange),
  },
  'grid',
);

const depthPositive = positive('well depth, in the energy unit');
const widthPositive = positive('width, in the length unit');

export const sech2InitialSchema = strictSection(
  { kind: z.literal('sech2'), depth: depthPositive, width: widthPositive, center: centerSchema },
  'initial (kind sech2)',
);

export const WELL_SHAPES = ['sech2', 'gaussian'] as const;
export const wellSchema = strictSection(
  {
    shape: oneOf(WELL_SHAPES),
    depth: numberWhere('must be a number ≠ 0 (well depth in the energy unit; negative for a barrier)', (v) => v !== 0),
    width: widthPositive,
    center: centerSchema,
  },
  'a well',
);

export const wellsInitialSchema = strictSection(
  {
    kind: z.literal('wells'),
    wells: z.array(wellSchema, { error: 'must be a list of wells {shape, depth, width, center}' }).min(1, { error: 'must list at least one well' }),
  },
  'initial (kind wells)',
);

export const solitonSchema = strictSection(
  { kappa: positive('soliton parameter κ, per length unit'), center: centerSchema },
  'a soliton',
);

export const solitonsInitialSchema = strictSection(
  {
    kind: z.literal('solitons'),
    solitons: z
      .array(solitonSchema, { error: 'must be a list of solitons {kappa, center}' })
      .min(1, { error: 'must list at least one soliton' })
      .superRefine((list, ctx) => {
        const seen = new Set<number>();
        for (const s of list) {
          if (seen.has(s.kappa)) {
            ctx.addIssue({ code: 'custom', message: `the kappa values must be distinct (kappa = ${s.kappa} appears more than once)` });
            return;
          }
          seen.add(s.kappa);
        }
      }),
  },
  'initial (kind solitons)',
);

export const samplesInitialSchema = strictSection(
  {
    kind: z.literal('samples'),
    file: z.string({ error: "must be a file name (.csv or .npy, relative to the config file's folder)" }).min(1, {
      error: "must be a file name (.csv or .npy, relative to the config file's folder)",
    }),
  },
  'initial (kind samples)',
);

/** the traps a user has: the kinds `initial.from` of a reflectionless start accepts */
export const TRAP_KINDS = ['sech2', 'wells', 'solitons', 'samples'] as const;

function kindUnion<const O extends readonly [z.core.$ZodTypeDiscriminable, ...z.core.$ZodTypeDiscriminable[]]>(options: O, kinds: readonly string[]) {
  return z.discriminatedUnion('kind', options, {
    error: (iss) => (iss.code === 'invalid_union' ? `must be one of ${kinds.join(', ')}` : `must be a mapping with a key kind (${kinds.join(', ')})`),
  });
}

export const trapSchema = kindUnion([sech2InitialSchema, wellsInitialSchema, solitonsInitialSchema, samplesInitialSchema], TRAP_KINDS);

export const reflectionlessInitialSchema = strictSection(
  { kind: z.literal('reflectionless'), from: trapSchema },
  'initial (kind reflectionless)',
);

export const TARGET_OUTCOMES = ['split', 'merge', 'transport', 'collision'] as const;
/** which point stays put: the wells' mean position (symmetric motion), the deepest or the shallowest well */
export const TARGET_HOLDS = ['center', 'deepest', 'shallowest'] as const;
/** wells of a split, merge or collision at least, and at most (each is a distinct bound state) */
const TARGET_WELLS_MAX = 8;

export const targetInitialSchema = strictSection(
  {
    kind: z.literal('target'),
    outcome: oneOf(TARGET_OUTCOMES),
    depths: z
      .array(depthPositive, { error: 'must be a list of well depths (energy unit), all different' })
      .min(1, { error: 'must list at least one depth' })
      .max(TARGET_WELLS_MAX, { error: `must list at most ${TARGET_WELLS_MAX} depths` })
      .superRefine((list, ctx) => {
        const message = equalDepthsMessage(list);
        if (message) ctx.addIssue({ code: 'custom', message });
      }),
    separation: positive('distance between the outermost wells, in the length unit').optional(),
    positions: z.array(numberWhere('must be a number (final well position, in the length unit)'), { error: 'must be a list of final well positions (length unit), one per depth' }).optional(),
    center: centerSchema,
    distance: numberWhere('must be a number ≠ 0 (how far the well moves, in the length unit)', (v) => v !== 0).optional(),
    gap: positive('distance between the wells before and after they pass, in the length unit').optional(),
    hold: oneOf(TARGET_HOLDS).default('center'),
  },
  'initial (kind target)',
).superRefine((t, ctx) => {
  for (const [path, message] of targetShapeIssues(t)) ctx.addIssue({ code: 'custom', path: [path], message });
});

export const INITIAL_KINDS = [...TRAP_KINDS, 'reflectionless', 'target'] as const;

export const initialSchema = kindUnion(
  [sech2InitialSchema, wellsInitialSchema, solitonsInitialSchema, samplesInitialSchema, reflectionlessInitialSchema, targetInitialSchema],
  INITIAL_KINDS,
);

export const DISPERSIONS = ['quantum', 'classical'] as const;
export const flowSchema = strictSection(
  {
    dispersion: oneOf(DISPERSIONS).default('quantum'),
    lambda_end: positive('final KdV time λ, dimensionless').optional(),
    frames: intBetween(2, 10000).default(11),
    tolerance: numberWhere(`must be a number from ${FLOW_TOLERANCE_MIN} to 1e-2 (local error per step relative to max|u|; ${FLOW_TOLERANCE_MIN} is the smallest double precision can meet)`, (v) => v >= FLOW_TOLERANCE_MIN && v <= 1e-2).default(FLOW_TOLERANCE_DEFAULT),
    drift: numberWhere('must be a number (co-moving drift c, length unit per unit λ)').default(0),
  },
  'flow',
).transform((f) => ({ ...f, lambda_end: f.lambda_end ?? Number.NaN })); // NaN until parseConfigWith sets or refuses it (io/target.ts)

export const protocolSchema = strictSection(
  {
    duration: positive('ramp duration, in t₀ (natural) or ms (lab)'),
    ramp: oneOf(RAMP_KINDS).default('sin2'),
  },
  'protocol',
);

const TEMPERATURE_RULE = 'must be a number ≥ 0 (in E₀ natural, nK lab)';

/** errors a lab makes in building the drive (quantum/propagator.ts DriveErrors), for tolerance studies */
export const errorsSchema = strictSection(
  {
    correction_scale: numberWhere('must be a number from -1 to 1 (relative error ε of the correction: A → (1 + ε)A)', (v) => v >= -1 && v <= 1).default(0),
    depth: numberWhere('must be a number from -0.5 to 0.5 (relative calibration error δ of the potential: V → (1 + δ)V)', (v) => v >= -0.5 && v <= 0.5).default(0),
    timing: numberWhere('must be a finite number (the correction runs late by this time, early when negative; t₀ natural, ms lab)', (v) => Number.isFinite(v) && Math.abs(v) <= 1e6).default(0),
    psf: numberWhere('must be a number ≥ 0 (1/e² radius of the optics’ Gaussian point-spread function blurring the painted potential; ℓ natural, µm lab; 0: none)', (v) => Number.isFinite(v) && v >= 0 && v <= 1e6).default(0),
    noise_rms: numberWhere('must be a number ≥ 0 (rms of the shot-to-shot potential noise the atoms see; E₀ natural, the energy unit lab; 0: none)', (v) => Number.isFinite(v) && v >= 0 && v <= 1e6).default(0),
    noise_correlation: numberWhere('must be a number > 0 (correlation length of the noise, correlation σ²exp(−r²/2ℓ_c²); ℓ natural, µm lab)', (v) => Number.isFinite(v) && v > 0 && v <= 1e6).optional(),
    noise_shots: intBetween(1, 1000).default(16),
    noise_seed: intBetween(0, 2 ** 31 - 1).default(1),
  },
  'verify.errors',
);

/** painted corrections verify can simulate (quantum/painted.ts): the best momentum-linear correction on the
 *  occupied states, and the one-state exact correction of the ground state */
export const PAINTED_KINDS = ['variational', 'ground'] as const;
/** step control of the Schrödinger drives (quantum/propagator.ts PropagateOptions.errorControl): `global`, uniform
 *  steps halved until the final states converge; `local`, one pass with the embedded estimate of every step */
export const STEP_CONTROLS = ['global', 'local'] as const;
export type PaintedKind = (typeof PAINTED_KINDS)[number];

/** a condensate driven through the same sequence (quantum/condensate.ts; physics.md §10): N atoms with either a
 *  scattering length and a transverse guide (g₁D = 2ħω⊥a_s, lab units only) or g₁D itself */
export const interactionSchema = strictSection(
  {
    atoms: numberWhere('must be a number from 1 to 1e9 (atoms in the condensate; a mean number may be fractional)', (v) => Number.isFinite(v) && v >= 1 && v <= 1e9),
    scattering_length_nm: numberWhere('must be a number from -1e4 to 1e4 (s-wave scattering length a_s in nm; negative: attractive)', (v) => Number.isFinite(v) && Math.abs(v) <= 1e4).optional(),
    scattering_length_bohr: numberWhere('must be a number from -1e5 to 1e5 (s-wave scattering length a_s in Bohr radii; negative: attractive)', (v) => Number.isFinite(v) && Math.abs(v) <= 1e5).optional(),
    transverse_hz: numberWhere('must be a number from 1 to 1e8 (transverse trap frequency ω⊥/2π in Hz)', (v) => Number.isFinite(v) && v >= 1 && v <= 1e8).optional(),
    g1d: numberWhere('must be a number from -1e12 to 1e12 (1-D coupling per atom g₁D in the energy unit × the length unit; negative: attractive)', (v) => Number.isFinite(v) && Math.abs(v) <= 1e12).optional(),
  },
  'verify.interaction',
).superRefine((v, ctx) => {
  const lengths = ['scattering_length_nm', 'scattering_length_bohr'].filter((k) => v[k as keyof typeof v] !== undefined);
  const say = (path: string, message: string) => ctx.addIssue({ code: 'custom', path: [path], message });
  if (lengths.length > 1) say('scattering_length_bohr', 'give the scattering length once: scattering_length_nm or scattering_length_bohr, not both');
  if (v.g1d !== undefined) {
    if (lengths.length > 0) say(lengths[0], 'give either g1d or a scattering length with transverse_hz, not both');
    if (v.transverse_hz !== undefined) say('transverse_hz', 'is used only with a scattering length (g₁D = 2ħω⊥a_s); with g1d leave it out');
  } else if (lengths.length === 0) say('g1d', 'is missing: give g1d (energy unit × length unit per atom) or a scattering length (scattering_length_nm or scattering_length_bohr) with transverse_hz');
  else if (v.transverse_hz === undefined) say('transverse_hz', 'is missing: a scattering length needs the transverse trap frequency ω⊥/2π in Hz (g₁D = 2ħω⊥a_s)');
});

export const verifySchema = strictSection(
  {
    states: intBetween(1, 1000).optional(),
    tolerance: numberWhere(`must be a number from ${VERIFY_TOLERANCE_MIN} to 1e-3 (infidelity budget of the time stepping; ${VERIFY_TOLERANCE_MIN} is the smallest double precision can confirm)`, (v) => v >= VERIFY_TOLERANCE_MIN && v <= 1e-3).default(1e-8),
    step_control: oneOf(STEP_CONTROLS).default('global'),
    temperature: z
      .number({ error: TEMPERATURE_RULE })
      .superRefine((v, ctx) => {
        if (!(v >= 0)) ctx.addIssue({ code: 'custom', message: TEMPERATURE_RULE });
        else if (v === 0) ctx.addIssue({ code: 'custom', message: 'a thermal ensemble needs a temperature > 0 (leave the key out for none)' });
      })
      .optional(),
    fermions: intBetween(1, 200).optional(),
    compare_classical: z.boolean({ error: 'must be true or false' }).default(false),
    painted: z.array(oneOf(PAINTED_KINDS), { error: `must be a list of ${PAINTED_KINDS.join(', ')}` }).default([]),
    errors: errorsSchema.prefault({}),
    interaction: interactionSchema.optional(),
  },
  'verify',
);

export const budgetSchema = strictSection(
  {
    depth: positive('deepest potential the lab can paint, in the energy unit').optional(),
    feature: positive('narrowest well (full width at half depth) the optics resolve, in the length unit').optional(),
    correction: positive('largest correction the hardware can make: its coupling out of the occupied states |λ̇|‖(1 − P)AP‖, in the energy unit (verify.json cd_strength.max_leakage)').optional(),
    coupling: positive('largest CD tunnelling coupling the lattice can realise (lattice.json couplings.largest_cd_coupling), h·Hz (lab) or E₀ (natural); needs a lattice section').optional(),
  },
  'budget',
);

/** top-level keys; extend with `configSchema.extend({...})` */
export const configShape = {
  name: nameSchema,
  description: z.string({ error: 'must be a text string' }).optional(),
  units: unitsSchema.prefault({ system: 'natural' }),
  grid: gridSchema,
  initial: initialSchema,
  flow: flowSchema,
  protocol: protocolSchema.optional(),
  verify: verifySchema.optional(),
  budget: budgetSchema.optional(),
};

export const configSchema = strictSection(configShape, 'the config');

export interface ConfigMeta {
  /** name of the source used in messages (the path as given) */
  readonly source: string;
  /** folder that relative paths in the config are resolved against */
  readonly baseDir: string;
}

/** validated config with defaults applied */
export type ConfigData = z.output<typeof configSchema>;
export type Config = ConfigData & { readonly meta: ConfigMeta };

// ---------------------------------------------------------------------------------------------------------
// messages

type PathKey = PropertyKey;

function formatPath(path: readonly PathKey[]): string {
  let out = '';
  for (const p of path) {
    if (typeof p === 'number') out += `[${p}]`;
    else out += out === '' ? String(p) : `.${String(p)}`;
  }
  return out === '' ? '(top level)' : out;
}

function lookup(raw: unknown, path: readonly PathKey[]): { present: boolean; value: unknown } {
  let cur: unknown = raw;
  for (const p of path) {
    if (cur === null || typeof cur !== 'object' || !Object.prototype.hasOwnProperty.call(cur, p)) return { present: false, value: undefined };
    cur = (cur as Record<PropertyKey, unknown>)[p];
  }
  return { present: true, value: cur };
}

function showValue(v: unknown): string {
  let s: string;
  if (typeof v === 'number') s = String(v);
  else if (v === undefined) s = 'undefined';
  else {
    try {
      s = JSON.stringify(v) ?? String(v);
    } catch {
      s = String(v);
    }
  }
  return s.length > MAX_VALUE_CHARS ? `${s.slice(0, MAX_VALUE_CHARS - 1)}…` : s;
}

/** One message line per problem: key, value and what is allowed. */
export function formatIssues(issues: readonly z.core.$ZodIssue[], raw: unknown, source: string): string[] {
  const lines: string[] = [];
  for (const iss of issues) {
    if (iss.code === 'unrecognized_keys') {
      for (const key of iss.keys) {
        const full = [...iss.path, key];
        lines.push(`${source}: ${formatPath(full)} = ${showValue(lookup(raw, full).value)} is not allowed: ${iss.message}`);
      }
      continue;
    }
    const { present, value } = lookup(raw, iss.path);
    if (!present) {
      const rule = iss.message.startsWith('required') ? iss.message : `required, ${iss.message}`;
      lines.push(`${source}: ${formatPath(iss.path)} is missing: ${rule}`);
    }
    else lines.push(`${source}: ${formatPath(iss.path)} = ${showValue(value)} is not allowed: ${iss.message}`);
  }
  return lines;
}

// ---------------------------------------------------------------------------------------------------------
// loading

/** YAML text → plain data; syntax errors become one UserError with `<source>:<line>:<column>` per problem */
export function parseYaml(text: string, sourceName: string): unknown {
  const doc = parseDocument(text);
  if (doc.errors.length > 0) {
    const lines = doc.errors.map((e) => {
      const pos = e.linePos?.[0];
      const where = pos ? `${sourceName}:${pos.line}:${pos.col}` : sourceName;
      const msg = e.message.split(/ at line \d+, column \d+/)[0].split('\n')[0];
      return `${where}: YAML syntax error: ${msg}`;
    });
    throw new UserError(lines.join('\n'));
  }
  try {
    return doc.toJS({ maxAliasCount: MAX_YAML_ALIASES });
  } catch (err) {
    // an alias to nothing, or more alias expansion than any config needs (a "billion laughs" document)
    throw new UserError(`${sourceName}: YAML aliases are not allowed here: ${(err as Error).message}`);
  }
}

/** file-system checks that zod cannot do: samples file must exist (resolved against baseDir) */
function fileIssues(raw: unknown, sourceName: string, baseDir: string): string[] {
  const nested = lookup(raw, ['initial', 'kind']).value === 'reflectionless';
  const at = nested ? ['initial', 'from'] : ['initial'];
  const { value: file } = lookup(raw, [...at, 'file']);
  const { value: kind } = lookup(raw, [...at, 'kind']);
  if (kind !== 'samples' || typeof file !== 'string' || file === '') return [];
  const key = `${at.join('.')}.file`;
  const abs = isAbsolute(file) ? file : resolve(baseDir, file);
  if (!existsSync(abs)) return [`${sourceName}: ${key} = ${showValue(file)} is not allowed: file not found (looked for ${abs})`];
  if (!statSync(abs).isFile()) return [`${sourceName}: ${key} = ${showValue(file)} is not allowed: ${abs} is not a regular file`];
  return [];
}

/** the problems, at most MAX_LISTED_PROBLEMS of them, and how many more there are */
function listProblems(lines: readonly string[], sourceName: string): string {
  if (lines.length <= MAX_LISTED_PROBLEMS) return lines.join('\n');
  return [...lines.slice(0, MAX_LISTED_PROBLEMS), `${sourceName}: … and ${lines.length - MAX_LISTED_PROBLEMS} more problems`].join('\n');
}

/**
 * Validate already-parsed YAML data against `schema` (configSchema or an extension of it), collecting every
 * problem into one UserError. Adds `meta` and resolves a samples file path against `baseDir`.
 */
export function parseConfigWith<S extends z.ZodType<ConfigData>>(
  schema: S,
  raw: unknown,
  sourceName: string,
  baseDir: string,
): z.output<S> & { readonly meta: ConfigMeta } {
  if (raw === null || raw === undefined) throw new UserError(`${sourceName}: the config is empty: it must be a mapping with at least name, grid, initial and flow`);
  if (typeof raw !== 'object' || Array.isArray(raw)) {
    throw new UserError(`${sourceName}: the config must be a mapping (key: value lines), got ${Array.isArray(raw) ? 'a list' : showValue(raw)}`);
  }
  const result = schema.safeParse(raw);
  const lines = result.success ? [] : formatIssues(result.error.issues, raw, sourceName);
  lines.push(...fileIssues(raw, sourceName, baseDir));
  if (result.success && lines.length === 0) lines.push(...settleFlow(result.data, (path) => lookup(raw, path).present, unitSystemOf(result.data.units)).map((l) => `${sourceName}: ${l}`));
  if (!result.success || lines.length > 0) throw new UserError(listProblems(lines, sourceName));
  const data = result.data as z.output<S>;
  const trap = data.initial.kind === 'reflectionless' ? data.initial.from : data.initial;
  if (trap.kind === 'samples' && !isAbsolute(trap.file)) trap.file = resolve(baseDir, trap.file);
  return Object.assign(data, { meta: { source: sourceName, baseDir: resolve(baseDir) } });
}

/**
 * Parse YAML text against `schema` (configSchema or an extension of it); `sourceName` names the text in messages
 * and relative paths resolve against `baseDir`.
 */
export function parseConfigTextWith<S extends z.ZodType<ConfigData>>(schema: S, text: string, sourceName: string, baseDir: string): z.output<S> & { readonly meta: ConfigMeta } {
  return parseConfigWith(schema, parseYaml(text, sourceName), sourceName, baseDir);
}

/** Read and validate a config file against `schema`; relative paths inside it resolve against the file's folder. */
export function loadConfigWith<S extends z.ZodType<ConfigData>>(schema: S, path: string): z.output<S> & { readonly meta: ConfigMeta } {
  return parseConfigTextWith(schema, readConfigText(path), path, dirname(resolve(path)));
}

/** Parse YAML text (named `sourceName` in messages; relative paths resolve against `baseDir`). */
export function parseConfig(text: string, sourceName: string, baseDir: string): Config {
  return parseConfigTextWith(configSchema, text, sourceName, baseDir);
}

/** Read a config file's text; a missing or unreadable file is a UserError naming the path. */
export function readConfigText(path: string): string {
  return readBoundedFile(path, MAX_CONFIG_BYTES, 'config file').toString('utf8');
}

/** Read and validate a config file; relative paths inside it resolve against the file's folder. */
export function loadConfig(path: string): Config {
  return loadConfigWith(configSchema, path);
}
