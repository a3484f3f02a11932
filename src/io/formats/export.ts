/**
 * export.json, written by `isotrap export` (jobs/export.ts): the sidecar of the protocol in lab time. It names
 * every array the export wrote (.npy, optionally .csv), its shape, axes and unit, the time grid and how it was
 * chosen, the ramp, the lab form of the correction and the accuracy of the potential between the stored frames.
 */
import { z } from 'zod';
import { UserError } from '../../core/errors.ts';
import { RAMP_KINDS, type RampKind } from '../../protocol/ramp.ts';
import { DISPERSIONS, ENERGY_UNITS, type UnitsConfig } from '../config.ts';
import { SPECIES_CHOICES } from '../../units/species.ts';
import { num, nums, readFormat, str } from './read.ts';


/** the painted potentials an export can hold: verify's painted drives and the condensate's painted protocol */
export const PAINTED_EXPORT_DRIVES = ['painted', 'painted_ground', 'painted_condensate'] as const;
export type PaintedExportDrive = (typeof PAINTED_EXPORT_DRIVES)[number];
/** what each painted potential carries (one wording for the sidecar, the CLI and the figures) */
export const PAINTED_WHAT: Record<PaintedExportDrive, string> = {
  painted: 'the best momentum-linear correction ½{g, p}',
  painted_ground: 'the one-state exact correction of the ground state',
  painted_condensate: 'the condensate’s painted protocol (its nonlinear ground state carried exactly; verify.interaction)',
};
export const EXPORT_FORMAT = 'isotrap-export/1';

/** one array of the export */
export interface ExportArray {
  /** file name inside the folder (.npy, float64, C order) */
  file: string;
  shape: number[];
  /** the meaning of each axis, in the order of shape */
  axes: string[];
  unit: string;
  meaning: string;
}

export interface ExportFile {
  format: 'isotrap-export/1';
  /** the folder the export was computed from */
  source: string;
  /** what that folder holds: a design with its verification (default), or a check of a sequence from elsewhere */
  source_kind?: 'design' | 'check';
  units: { length: string; energy: string; time: string; velocity: string };
  /** λ runs from lambda_start (default 0) to lambda_end over the duration */
  protocol: { ramp: string; duration: number; lambda_end: number; lambda_start?: number };
  /** the sample times: t_i = i/rate (rate given) or i·T/(samples − 1) */
  sampling: { samples: number; rate: number; step: number; rule: string };
  /** the arrays by key: x, t, lambda, lambda_rate, lambda_accel, potential, cubic, velocity */
  arrays: Record<string, ExportArray>;
  /** the CSV tables written with --csv (empty without) */
  tables: { file: string; columns: string[]; meaning: string }[];
  correction: {
    form: string;
    cubic_unit: string;
    velocity_unit: string;
    /** the reference wavenumber of the size summary, 1/length */
    k_ref: number;
    max_cubic_energy: number;
    max_velocity: number;
    max_linear_energy: number;
    at_time_cubic: number;
    at_time_linear: number;
    explanation: string;
  };
  accuracy: {
    flow_tolerance: number;
    /** max |V_reintegrated − V_stored| over the stored frames, relative to max |V(0)| */
    frames_agreement: number;
    statement: string;
  };
  /** the painted potentials (verify.json's painted drives and the condensate's painted protocol): range per drive
   *  against the starting trap, and the optics' blur with --psf-um */
  painted: null | {
    meaning: string;
    drives: {
      drive: PaintedExportDrive; deepest: number; highest: number; psf_change: number | null; psf_change_at: number | null;
      /** the drive simulated by the export itself (a check source has no verify.json): per state fidelity and excess energy */
      fidelity?: number[]; excess?: number[];
    }[];
    start: { deepest: number; highest: number };
    psf: null | {
      radius: number;
      unit: string;
      rule: string;
      drives: { drive: string; fidelity: number[]; fidelity_unblurred: number[]; lost: number }[];
    };
  };
  seconds: number;
  warnings: string[];
}

/** the array keys every export holds */
export const EXPORT_ARRAY_KEYS = ['x', 't', 'lambda', 'lambda_rate', 'lambda_accel', 'potential', 'cubic', 'velocity'] as const;

const arraySchema: z.ZodType<ExportArray> = z.object({ file: str, shape: z.array(z.number().int().nonnegative()), axes: z.array(str), unit: str, meaning: str });

const exportSchema: z.ZodType<ExportFile> = z
  .object({
    format: z.literal(EXPORT_FORMAT),
    source: str,
    source_kind: z.enum(['design', 'check']).optional(),
    units: z.object({ length: str, energy: str, time: str, velocity: str }),
    protocol: z.object({ ramp: z.enum(RAMP_KINDS), duration: num, lambda_end: num, lambda_start: num.optional() }),
    sampling: z.object({ samples: z.number().int().min(2), rate: num, step: num, rule: str }),
    arrays: z.record(z.string(), arraySchema),
    tables: z.array(z.object({ file: str, columns: z.array(str), meaning: str })),
    correction: z.object({
      form: str, cubic_unit: str, velocity_unit: str, k_ref: num, max_cubic_energy: num, max_velocity: num, max_linear_energy: num,
      at_time_cubic: num, at_time_linear: num, explanation: str,
    }),
    accuracy: z.object({ flow_tolerance: num, frames_agreement: num, statement: str }),
    painted: z
      .object({
        meaning: str,
        drives: z.array(z.object({ drive: z.enum(PAINTED_EXPORT_DRIVES), deepest: num, highest: num, psf_change: num.nullable(), psf_change_at: num.nullable(), fidelity: nums.optional(), excess: nums.optional() })),
        start: z.object({ deepest: num, highest: num }),
        psf: z.object({ radius: num, unit: str, rule: str, drives: z.array(z.object({ drive: str, fidelity: nums, fidelity_unblurred: nums, lost: num })) }).nullable(),
      })
      .nullable(),
    seconds: num,
    warnings: z.array(str),
  })
  .superRefine((f, ctx) => {
    for (const key of EXPORT_ARRAY_KEYS) if (!f.arrays[key]) ctx.addIssue({ code: 'custom', path: ['arrays', key], message: 'missing: every export names this array' });
    for (const [key, a] of Object.entries(f.arrays)) {
      if (a.axes.length !== a.shape.length) ctx.addIssue({ code: 'custom', path: ['arrays', key, 'axes'], message: `names ${a.axes.length} axes for a shape of ${a.shape.length}` });
      if (!/^[A-Za-z0-9][A-Za-z0-9._-]*\.npy$/.test(a.file)) ctx.addIssue({ code: 'custom', path: ['arrays', key, 'file'], message: 'must name a .npy file inside the folder' });
    }
  });

/** Read and validate export.json (UserError naming the file and the key otherwise). */
export function readExportFile(path: string): ExportFile {
  return readFormat(path, exportSchema, EXPORT_FORMAT, 'export');
}

/** the settings of a design that an export needs, from the config recorded in sequence.json */
export interface RecordedSettings {
  units: UnitsConfig;
  flow: { dispersion: 'quantum' | 'classical'; lambda_end: number; tolerance: number; drift: number };
  grid: { length: number };
  protocol: { duration: number; ramp: RampKind };
}

const recordedSchema = z.object({
  units: z.union([
    z.object({ system: z.literal('natural') }),
    z.object({ system: z.literal('lab'), species: z.enum(SPECIES_CHOICES), mass_u: z.number().positive(), label: str, length_unit_um: z.number().positive(), energy: z.enum(ENERGY_UNITS) }),
  ]),
  flow: z.object({ dispersion: z.enum(DISPERSIONS), lambda_end: z.number().positive(), tolerance: z.number().positive(), drift: z.number() }),
  grid: z.object({ length: z.number().positive() }),
});
const protocolRecord = z.object({ duration: z.number().positive(), ramp: z.enum(RAMP_KINDS) });

/**
 * The units, flow and protocol of the config recorded in sequence.json (`path` for messages); UserError naming the
 * key when one is missing or malformed, and naming the protocol section when the design was made without one.
 */
export function recordedSettings(config: Record<string, unknown>, path: string): RecordedSettings {
  const r = recordedSchema.safeParse(config);
  if (!r.success) {
    const iss = r.error.issues[0];
    throw new UserError(`${path}: key config.${iss.path.join('.')}: ${iss.message}: the recorded config is not one isotrap design writes`);
  }
  if (config.protocol === undefined || config.protocol === null) {
    throw new UserError(`${path}: the design has no protocol section (config.protocol is missing): an export needs the ramp and its duration; add e.g. protocol: { duration: 2.0, ramp: sin2 } and run isotrap run again`);
  }
  const p = protocolRecord.safeParse(config.protocol);
  if (!p.success) throw new UserError(`${path}: key config.protocol.${p.error.issues[0].path.join('.')}: ${p.error.issues[0].message}`);
  return { units: r.data.units, flow: r.data.flow, grid: r.data.grid, protocol: p.data };
}
