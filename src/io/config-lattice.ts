/**
 * The `lattice` section of a scenario (jobs/lattice.ts runs it, physics.md §6): its schema with the defaults and
 * the rules that tie it to the unit system, and the loaders of a config that may hold it (with `compare`).
 * Messages follow io/config.ts.
 *
 * Section (in the same file as `compare`):
 *
 *   lattice:
 *     spacing_um: 0.532          # lab: lattice spacing d in µm          } exactly one (lab)
 *     wavelength_nm: 1064        # lab: lattice light, d = λ/2           }
 *     spacing: 0.25              # natural units only: d in ℓ (then J = E₀ℓ²/d² is implied)
 *     tunnelling_hz: 120         # lab: J in h·Hz                        } exactly one (lab)
 *     depth_recoil: 8            # lab: V₀ in E_R (J from the band)      }
 *     tunnelling_source: band    # with depth_recoil: band (default: a quarter of the lowest Mathieu band width,
 *                                #   physics.md §6) or estimate (Zwerger's deep-lattice formula, an approximation)
 *     sites_per_width: [3, 4, 6, 8]  # convergence study (sites per width 1/κ of the narrowest soliton); [] skips
 *     target_infidelity: 1e-4    # the recommended lattice keeps 1 − F_CD of every state below this
 *     samples: 21                # time samples of the control tables
 *     states: …                  # propagated states (default: the bound states, at most 6)
 *     tolerance: 1e-4            # local error per unit time of the lattice propagation (amplitude; the
 *                                #   fidelities move by ~1e-9 against 1e-5)
 */
import { z } from 'zod';
import { MAX_DEPTH_RECOIL } from '../lattice/bands.ts';
import { intBetween, loadConfigWith, numberWhere, parseConfigTextWith, positive, strictSection, type ConfigMeta } from './config.ts';
import { compareConfigSchema } from './config-compare.ts';

/** default sites per soliton width of the convergence study (infidelity ∝ (sites)^−4: 3 → 8 spans ~2 decades) */
export const DEFAULT_SITES_PER_WIDTH = [3, 4, 6, 8] as const;
export const DEFAULT_TARGET_INFIDELITY = 1e-4;

const sitesRule = 'must be a list of distinct numbers ≥ 1 (sites per width of the narrowest soliton); [] skips the study';

export const latticeSectionSchema = strictSection(
  {
    spacing_um: positive('lattice spacing d in µm; lab units').optional(),
    wavelength_nm: positive('wavelength of the lattice light in nm, d = λ/2; lab units').optional(),
    spacing: positive('lattice spacing d in ℓ; natural units').optional(),
    tunnelling_hz: positive('tunnelling J in h·Hz; lab units').optional(),
    depth_recoil: z
      .number({ error: `must be a number in (0, ${MAX_DEPTH_RECOIL}] (lattice depth V₀ in recoil energies E_R; lab units)` })
      .refine((v) => v > 0 && v <= MAX_DEPTH_RECOIL, { error: `must be a number in (0, ${MAX_DEPTH_RECOIL}] (lattice depth V₀ in recoil energies E_R; lab units; deeper bands are narrower than double-precision round-off)` })
      .optional(),
    tunnelling_source: z.enum(['band', 'estimate'], { error: 'must be one of band, estimate' }).optional(),
    sites_per_width: z
      .array(z.number({ error: sitesRule }).refine((v) => Number.isFinite(v) && v >= 1, { error: sitesRule }), { error: sitesRule })
      .refine((v) => new Set(v).size === v.length, { error: sitesRule })
      .default([...DEFAULT_SITES_PER_WIDTH]),
    target_infidelity: numberWhere('must be a number in (0, 0.5)', (v) => v > 0 && v < 0.5).default(DEFAULT_TARGET_INFIDELITY),
    samples: intBetween(2, 2001).default(21),
    states: intBetween(1, 50).optional(),
    tolerance: numberWhere('must be a number in (0, 1e-2] (local error per unit time of the lattice propagation)', (v) => v > 0 && v <= 1e-2).default(1e-4),
  },
  'lattice',
);

export type LatticeSection = z.output<typeof latticeSectionSchema>;

export const latticeConfigSchema = compareConfigSchema.extend({ lattice: latticeSectionSchema.optional() }).superRefine((c, ctx) => {
  const l = c.lattice;
  if (!l) return;
  const lab = c.units.system === 'lab';
  const issue = (key: string, message: string) => ctx.addIssue({ code: 'custom', path: ['lattice', key], message });
  if (lab) {
    if (l.spacing !== undefined) issue('spacing', 'only allowed with units.system: natural; in lab units give spacing_um or wavelength_nm');
    if ((l.spacing_um === undefined) === (l.wavelength_nm === undefined)) {
      issue(l.spacing_um === undefined ? 'spacing_um' : 'wavelength_nm', 'give exactly one of lattice.spacing_um (d in µm) and lattice.wavelength_nm (d = λ/2)');
    }
    if ((l.tunnelling_hz === undefined) === (l.depth_recoil === undefined)) {
      issue(l.tunnelling_hz === undefined ? 'tunnelling_hz' : 'depth_recoil', 'give exactly one of lattice.tunnelling_hz (J in h·Hz) and lattice.depth_recoil (V₀ in E_R)');
    }
    if (l.tunnelling_source !== undefined && l.depth_recoil === undefined) issue('tunnelling_source', 'only allowed with lattice.depth_recoil');
  } else {
    if (l.spacing === undefined) issue('spacing', 'required with units.system: natural: the lattice spacing d in ℓ (J = E₀ℓ²/d² follows from the effective mass)');
    for (const key of ['spacing_um', 'wavelength_nm', 'tunnelling_hz', 'depth_recoil', 'tunnelling_source'] as const) {
      if (l[key] !== undefined) issue(key, 'only allowed with units.system: lab (natural units carry no mass or lab lengths)');
    }
  }
});

export type LatticeConfig = z.output<typeof latticeConfigSchema> & { readonly meta: ConfigMeta };

/** Parse YAML text of a config that may hold `compare` and `lattice` sections. */
export function parseLatticeConfig(text: string, sourceName: string, baseDir: string): LatticeConfig {
  return parseConfigTextWith(latticeConfigSchema, text, sourceName, baseDir);
}

/** Read and validate a config file for `lattice`. */
export function loadLatticeConfig(path: string): LatticeConfig {
  return loadConfigWith(latticeConfigSchema, path);
}
