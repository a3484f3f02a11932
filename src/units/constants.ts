/**
 * Physical constants, CODATA 2018 recommended values
 * (E. Tiesinga, P. J. Mohr, D. B. Newell, B. N. Taylor, "CODATA recommended values of the fundamental physical
 * constants: 2018", Rev. Mod. Phys. 93, 025010, 2021). All in SI units.
 */

/** Planck constant h, J s (exact since the 2019 SI redefinition) */
export const PLANCK_H = 6.62607015e-34;

/** reduced Planck constant ħ = h/2π, J s (exact; 1.054571817…e-34) */
export const HBAR = PLANCK_H / (2 * Math.PI);

/** atomic mass constant m_u = m(¹²C)/12 = 1 u, kg (CODATA 2018, relative standard uncertainty 3.0e-10) */
export const ATOMIC_MASS_CONSTANT = 1.6605390666e-27;

/** Boltzmann constant k_B, J/K (exact since the 2019 SI redefinition) */
export const BOLTZMANN_K = 1.380649e-23;
