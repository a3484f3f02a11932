/**
 * The `compare` section of a scenario (jobs/compare.ts runs it): its schema with the defaults, and the loaders of
 * a config that may hold it. Messages follow io/config.ts.
 *
 * Section (optional; every key has a default):
 *
 *   compare:
 *     sweep: [0.1, 0.1778, 0.3162, 0.5623, 1]   # factors applied to the config's δ = √(ħ²/2mV₀w²) for the
 *                                              # scaling study (≥ 3 distinct values > 0; a decade by default)
 *     lambda_fraction: 0.25    # the fixed scaled λ of the study, as a fraction of the scaled Hopf breaking λ
 *                              # T_b = 1/max(6∂_y v₀) (in (0, 0.9]); the δ² law holds at small λ
 *     samples: 101             # λ points of the distance curve on [0, min(λ_end, classical end)]
 *     sweep_drift: true        # also run the phase-space check for every δ of the sweep (scaled variables)
 *     trajectories:
 *       shells: 4              # energy shells of H(0) in the deepest well (between 15 % and 70 % of its height)
 *       phases: 4              # starting points per shell
 *       duration: …            # ramp duration 0 → λ (user time unit); default protocol.duration, else `periods`
 *       periods: 4             # … small-oscillation periods of the deepest well
 */
import { z } from 'zod';
import { configSchema, loadConfigWith, parseConfigTextWith, strictSection, type ConfigMeta } from './config.ts';

/** a decade of δ below the config's own, five points evenly spaced in log δ */
export const DEFAULT_SWEEP = [0.1, 0.1778, 0.3162, 0.5623, 1] as const;
/** small enough that the δ² law of the distance holds to a few 0.01 in the exponent for a sech² well */
export const DEFAULT_LAMBDA_FRACTION = 0.25;
/** trajectory ramps default to this many small-oscillation periods when neither duration is configured */
export const DEFAULT_PERIODS = 4;

const sweepRule = 'must be a list of at least 3 distinct numbers > 0 (factors applied to the config’s δ)';
export const trajectoriesSchema = strictSection(
  {
    shells: z.number({ error: 'must be an integer from 1 to 50' }).int({ error: 'must be an integer from 1 to 50' }).min(1, { error: 'must be an integer from 1 to 50' }).max(50, { error: 'must be an integer from 1 to 50' }).default(4),
    phases: z.number({ error: 'must be an integer from 1 to 64' }).int({ error: 'must be an integer from 1 to 64' }).min(1, { error: 'must be an integer from 1 to 64' }).max(64, { error: 'must be an integer from 1 to 64' }).default(4),
    duration: z.number({ error: 'must be a number > 0 (ramp duration, in t₀ (natural) or ms (lab))' }).positive({ error: 'must be a number > 0 (ramp duration, in t₀ (natural) or ms (lab))' }).optional(),
    periods: z.number({ error: 'must be a number > 0 (small-oscillation periods of the deepest well)' }).positive({ error: 'must be a number > 0 (small-oscillation periods of the deepest well)' }).default(DEFAULT_PERIODS),
  },
  'compare.trajectories',
);

export const compareSectionSchema = strictSection(
  {
    sweep: z
      .array(z.number({ error: sweepRule }).positive({ error: sweepRule }), { error: sweepRule })
      .min(3, { error: sweepRule })
      .refine((v) => new Set(v).size === v.length, { error: sweepRule })
      .default([...DEFAULT_SWEEP]),
    lambda_fraction: z
      .number({ error: 'must be a number in (0, 0.9] (fraction of the scaled classical breaking λ)' })
      .refine((v) => v > 0 && v <= 0.9, { error: 'must be a number in (0, 0.9] (fraction of the scaled classical breaking λ)' })
      .default(DEFAULT_LAMBDA_FRACTION),
    samples: z.number({ error: 'must be an integer from 3 to 2001' }).int({ error: 'must be an integer from 3 to 2001' }).min(3, { error: 'must be an integer from 3 to 2001' }).max(2001, { error: 'must be an integer from 3 to 2001' }).default(101),
    sweep_drift: z.boolean({ error: 'must be true or false' }).default(true),
    trajectories: trajectoriesSchema.prefault({}),
  },
  'compare',
);

export const compareConfigSchema = configSchema.extend({ compare: compareSectionSchema.prefault({}) });
export type CompareConfig = z.output<typeof compareConfigSchema> & { readonly meta: ConfigMeta };

/** Parse YAML text of a config with an optional `compare` section (messages as in io/config.ts). */
export function parseCompareConfig(text: string, sourceName: string, baseDir: string): CompareConfig {
  return parseConfigTextWith(compareConfigSchema, text, sourceName, baseDir);
}

/** Read and validate a config file for `compare`. */
export function loadCompareConfig(path: string): CompareConfig {
  return loadConfigWith(compareConfigSchema, path);
}
