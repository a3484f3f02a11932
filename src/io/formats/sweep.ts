/**
 * The files of `isotrap sweep` (jobs/sweep.ts):
 *
 *  - points/plan.json: what the sweep computes (config hash, the varied keys and their values, the target); a
 *    folder holding another plan is never resumed;
 *  - points/p<index>.json: one finished point (written atomically as soon as it is done, so an interrupted sweep
 *    resumes where it stopped);
 *  - sweep.json: the plan, every point of the run (or of its shard) and the answers (shortest durations);
 *  - sweep.csv: the tidy table, one row per point × drive × state or ensemble, the varied keys and units in the
 *    header.
 *
 * Values are in the config's units, as in verify.json (io/formats/verify.ts).
 */
import { z } from 'zod';
import { UserError } from '../../core/errors.ts';
import { num, numOrNull, nums, readFormat, readJsonFile, parseFormat, str, strOrNull } from './read.ts';

export const SWEEP_FORMAT = 'isotrap-sweep/1';
export const SWEEP_PLAN_FORMAT = 'isotrap-sweep-plan/1';
export const SWEEP_POINT_FORMAT = 'isotrap-sweep-point/1';

/** one varied config key: its dotted path, the unit of its values and the values swept */
export interface SweepAxis {
  key: string;
  unit: string;
  /** how the values were given: lin, log or list */
  spacing: 'lin' | 'log' | 'list';
  values: number[];
}

export interface SweepPlan {
  format: typeof SWEEP_PLAN_FORMAT;
  /** SHA-256 of the validated config (io/run-folder.ts configIdentity) */
  config_hash: string;
  /** hash of everything below: two folders with the same id hold points of the same sweep */
  id: string;
  axes: SweepAxis[];
  /** points in all: the product of the axes' value counts; point p has value index p ÷ (n₂) and p mod n₂ */
  points: number;
  /** the infidelity 1 − F a drive must reach (the answers) */
  target_infidelity: number;
  units: { energy: string; time: string; length: string; temperature: string };
}

export interface SweepState {
  index: number;
  /** energy of the tracked eigenstate at the start of the ramp */
  energy: number;
  fidelity: number;
  excess: number;
}

export interface SweepDrive {
  drive: string;
  min_fidelity: number;
  /** painted drives: the painted potential's depth −min(V + V_loc) over the protocol (energy unit), the quantity a
   *  laser-power budget limits; absent for the other drives, whose depth is the designed sequence's */
  painted_depth?: number;
  /** corrected drives (cd): the correction's coupling out of the occupied states, max |λ̇|‖(1 − P)AP‖ (verify.json
   *  cd_strength.max_leakage, energy unit), the quantity budget.correction limits */
  correction_size?: number;
  /** corrected drive of a config with a lattice section: the largest CD coupling of its lattice realisation
   *  (lattice.json couplings.largest_cd_coupling, h·Hz lab), the quantity budget.coupling limits */
  lattice_coupling?: number;
  states: SweepState[];
  thermal: null | { temperature: number; fidelity: number; uhlmann: number; mean_excess: number };
  fermions: null | { count: number; fidelity: number };
}

export interface SweepPoint {
  format: typeof SWEEP_POINT_FORMAT;
  plan: string;
  index: number;
  values: number[];
  /** null when the point ran; else why it could not (e.g. a flow that breaks before λ_end at this depth) */
  error: string | null;
  drives: SweepDrive[];
  /** deepest potential of the designed sequence and the budget's limit (null: no budget.depth) */
  deepest: number;
  limit_depth: number | null;
  /** budget.correction (energy unit; null or absent: none stated) */
  limit_correction?: number | null;
  /** budget.coupling (h·Hz lab, E₀ natural; null or absent: none stated) */
  limit_coupling?: number | null;
  /** verify's acceptance of the corrected drive (jobs/verify.ts ACCEPT_INFIDELITY) */
  accepted: boolean;
  warnings: string[];
  seconds: number;
}

/** the shortest swept value of the duration axis from which on a drive meets the target (see jobs/sweep.ts) */
export interface SweepAnswer {
  drive: string;
  /** ground, worst (the worst tracked state), thermal, uhlmann, fermi_sea */
  subject: string;
  /** the other key's value in a two-key sweep, else null */
  other: number | null;
  /** shortest swept duration from which on every longer swept duration meets the target; null: none */
  duration: number | null;
  /** the crossing 1 − F = target, log–log interpolated between the neighbouring swept durations; null: none */
  interpolated: number | null;
  /** the same with the budget also met: budget.depth (the sequence's or painted depth), budget.correction and
   *  budget.coupling (the corrected drive's correction_size and lattice_coupling); null when none is stated or none
   *  meets it */
  duration_in_budget: number | null;
}

/** the tolerance on a swept error key (verify.errors.*) for the target infidelity, on one side of zero */
export interface SweepTolerance {
  key: string;
  drive: string;
  subject: string;
  other: number | null;
  side: 'positive' | 'negative';
  /** the largest swept |value| up to which every swept value on this side meets the target; null: not even the smallest */
  tolerance: number | null;
  /** the crossing 1 − F = target, log–log interpolated between that value and the next larger one; null: none */
  interpolated: number | null;
}

export interface SweepFile {
  format: typeof SWEEP_FORMAT;
  name: string;
  plan: SweepPlan;
  /** null for a whole sweep; else the shard this folder holds */
  shard: null | { index: number; count: number };
  points: SweepPoint[];
  answers: SweepAnswer[];
  /** with an error key of verify.errors swept: how large the error may be for the target (absent in older files) */
  tolerances?: SweepTolerance[];
  /** the duration at which the bare drive's ground state reaches the target (null: not in the swept range) */
  adiabatic_time: number | null;
  definitions: Record<string, string>;
  config: unknown;
  seconds: number;
}

const axisSchema = z.object({ key: str, unit: str, spacing: z.enum(['lin', 'log', 'list']), values: nums });
const unitsSchema = z.object({ energy: str, time: str, length: str, temperature: str });

const planSchema: z.ZodType<SweepPlan> = z.object({
  format: z.literal(SWEEP_PLAN_FORMAT),
  config_hash: str,
  id: str,
  axes: z.array(axisSchema).min(1).max(2),
  points: z.number().int().positive(),
  target_infidelity: num,
  units: unitsSchema,
});

const driveSchema = z.object({
  drive: str,
  min_fidelity: num,
  painted_depth: num.optional(),
  correction_size: num.optional(),
  lattice_coupling: num.optional(),
  states: z.array(z.object({ index: num, energy: num, fidelity: num, excess: num })),
  thermal: z.object({ temperature: num, fidelity: num, uhlmann: num, mean_excess: num }).nullable(),
  fermions: z.object({ count: num, fidelity: num }).nullable(),
});

const pointSchema: z.ZodType<SweepPoint> = z.object({
  format: z.literal(SWEEP_POINT_FORMAT),
  plan: str,
  index: z.number().int().nonnegative(),
  values: nums,
  error: strOrNull,
  drives: z.array(driveSchema),
  deepest: num,
  limit_depth: numOrNull,
  limit_correction: numOrNull.optional(),
  limit_coupling: numOrNull.optional(),
  accepted: z.boolean(),
  warnings: z.array(str),
  seconds: num,
});

const answerSchema = z.object({ drive: str, subject: str, other: numOrNull, duration: numOrNull, interpolated: numOrNull, duration_in_budget: numOrNull });
const toleranceSchema = z.object({ key: str, drive: str, subject: str, other: numOrNull, side: z.enum(['positive', 'negative']), tolerance: numOrNull, interpolated: numOrNull });

const sweepSchema: z.ZodType<SweepFile> = z.object({
  format: z.literal(SWEEP_FORMAT),
  name: str,
  plan: planSchema,
  shard: z.object({ index: z.number().int().positive(), count: z.number().int().positive() }).nullable(),
  points: z.array(pointSchema),
  answers: z.array(answerSchema),
  tolerances: z.array(toleranceSchema).optional(),
  adiabatic_time: numOrNull,
  definitions: z.record(z.string(), z.string()),
  config: z.unknown(),
  seconds: num,
});

export function readSweepFile(path: string): SweepFile {
  return readFormat(path, sweepSchema, SWEEP_FORMAT, 'sweep');
}

export function readSweepPlan(path: string): SweepPlan {
  return readFormat(path, planSchema, SWEEP_PLAN_FORMAT, 'sweep');
}

/** a finished point file, or null when it is missing, unreadable or of another plan (then it is computed again) */
export function readSweepPoint(path: string, plan: string): SweepPoint | null {
  try {
    const p = parseFormat(readJsonFile(path), pointSchema, path, SWEEP_POINT_FORMAT, 'sweep');
    return p.plan === plan ? p : null;
  } catch (err) {
    if (err instanceof UserError) return null;
    throw err;
  }
}

/** the subjects of the table besides the tracked states */
export const ENSEMBLE_SUBJECTS = ['thermal', 'thermal_uhlmann', 'fermi_sea'] as const;

/** a number as the shortest text that reads back to the same double; empty for NaN and null */
function cell(v: number | null): string {
  return v === null || !Number.isFinite(v) ? '' : String(v);
}

function csvText(s: string): string {
  return /[",\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

/**
 * sweep.csv: one row per point × drive × (tracked state | ensemble), points in index order. Columns: point, the
 * varied keys (header `key (unit)`), drive, subject (state, thermal, thermal_uhlmann, fermi_sea), state index,
 * energy at the start, fidelity F, infidelity 1 − F, excess energy. Points that could not run have no rows.
 */
export function sweepCsv(file: Pick<SweepFile, 'plan' | 'points'>): string {
  const { plan } = file;
  const E = plan.units.energy;
  const header = ['point', ...plan.axes.map((a) => `${a.key} (${a.unit})`), 'drive', 'subject', 'state', `energy (${E})`, 'fidelity', 'infidelity', `excess (${E})`];
  const lines = [header.map(csvText).join(',')];
  for (const p of file.points) {
    const lead = [String(p.index), ...p.values.map(cell)];
    for (const d of p.drives) {
      const row = (subject: string, state: number | null, energy: number | null, f: number, excess: number | null) =>
        lines.push([...lead, csvText(d.drive), subject, cell(state), cell(energy), cell(f), cell(1 - f), cell(excess)].join(','));
      for (const s of d.states) row('state', s.index, s.energy, s.fidelity, s.excess);
      if (d.thermal) {
        row('thermal', null, null, d.thermal.fidelity, d.thermal.mean_excess);
        row('thermal_uhlmann', null, null, d.thermal.uhlmann, null);
      }
      if (d.fermions) row('fermi_sea', null, null, d.fermions.fidelity, null);
    }
  }
  return lines.join('\n') + '\n';
}
