/**
 * Atomic species used for trapping, with their neutral-atom masses.
 *
 * Masses in u (unified atomic mass units) from the AME2020 atomic mass evaluation
 * (W. J. Huang et al., Chinese Phys. C 45, 030002, 2021; M. Wang et al., Chinese Phys. C 45, 030003, 2021,
 * Table I "atomic mass" column). Values are from memory of that table, rounded to 1e-9 u, apart from ⁸⁷Rb which
 * is also quoted in /work/shared/physics.md §3 (86.909180531 u).
 */
import { UserError } from '../core/errors.ts';
import { ATOMIC_MASS_CONSTANT } from './constants.ts';

export interface SpeciesData {
  /** neutral-atom mass in u */
  readonly massU: number;
  /** display label with superscript mass number */
  readonly label: string;
  /** mass number A */
  readonly massNumber: number;
}

// from memory (AME2020, Chinese Phys. C 45, 030003, 2021, Table I)
export const SPECIES = {
  Li6: { massU: 6.015122887, label: '⁶Li', massNumber: 6 },
  Li7: { massU: 7.016003434, label: '⁷Li', massNumber: 7 },
  Na23: { massU: 22.989769282, label: '²³Na', massNumber: 23 },
  K39: { massU: 38.963706486, label: '³⁹K', massNumber: 39 },
  K40: { massU: 39.963998166, label: '⁴⁰K', massNumber: 40 },
  K41: { massU: 40.961825258, label: '⁴¹K', massNumber: 41 },
  Rb87: { massU: 86.909180531, label: '⁸⁷Rb', massNumber: 87 },
  Sr88: { massU: 87.905612253, label: '⁸⁸Sr', massNumber: 88 },
  Cs133: { massU: 132.905451961, label: '¹³³Cs', massNumber: 133 },
  Yb174: { massU: 173.938867545, label: '¹⁷⁴Yb', massNumber: 174 },
} as const satisfies Record<string, SpeciesData>;

export type SpeciesName = keyof typeof SPECIES;

/** the tabulated species, in table order */
export const SPECIES_NAMES = Object.keys(SPECIES) as SpeciesName[];

/** every name accepted where a species is asked for: the table plus 'custom' (mass supplied in u) */
export type SpeciesChoice = SpeciesName | 'custom';
const [FIRST_SPECIES, ...OTHER_SPECIES] = SPECIES_NAMES;
/** the tabulated species, then 'custom': a non-empty tuple, as enum schemas need */
export const SPECIES_CHOICES: readonly [SpeciesChoice, ...SpeciesChoice[]] = [FIRST_SPECIES, ...OTHER_SPECIES, 'custom'];

export function isSpeciesName(name: string): name is SpeciesName {
  return Object.prototype.hasOwnProperty.call(SPECIES, name);
}

function allowedList(): string {
  return SPECIES_CHOICES.join(', ');
}

/**
 * Mass in u of a species. For `custom`, `customMassU` (in u, finite, > 0) is returned.
 * Unknown names, or a bad custom mass, throw a UserError listing what is allowed.
 */
export function speciesMass(name: string, customMassU?: number): number {
  if (name === 'custom') {
    if (customMassU === undefined) throw new UserError(`species = "custom" needs a mass in u (mass_u), none was given`);
    if (!Number.isFinite(customMassU) || !(customMassU > 0)) {
      throw new UserError(`mass_u = ${customMassU} is not allowed: must be a finite number > 0 (mass in u)`);
    }
    return customMassU;
  }
  if (!isSpeciesName(name)) {
    throw new UserError(`species = ${JSON.stringify(name)} is not allowed: must be one of ${allowedList()}`);
  }
  return SPECIES[name].massU;
}

export interface ResolvedSpecies {
  readonly name: SpeciesChoice;
  readonly massU: number;
  readonly massKg: number;
  readonly label: string;
}

/** Species name (or custom with a mass in u) → mass in u and kg (m = mass_u · m_u, CODATA 2018) and a label. */
export function resolveSpecies(name: string, customMassU?: number): ResolvedSpecies {
  const massU = speciesMass(name, customMassU);
  const label = name === 'custom' ? `custom (${massU} u)` : SPECIES[name as SpeciesName].label;
  return { name: name as SpeciesChoice, massU, massKg: massU * ATOMIC_MASS_CONSTANT, label };
}
