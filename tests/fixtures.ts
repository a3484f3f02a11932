/** Small scenarios shared by tests (invented, illustrative). */

/** one soliton u = −2 sech²(ξ + 2) (physics.md §4) on a small grid, with a short protocol: a quick design → verify */
export const SMALL_SOLITON = (name: string): string => `name: ${name}
units: { system: natural }
grid: { length: 40, points: 256 }
initial: { kind: sech2, depth: 2, width: 1, center: -2 }
flow: { lambda_end: 0.2, frames: 5 }
protocol: { duration: 0.4, ramp: sin2 }
verify: { states: 2 }
`;

/** a shallow ⁸⁷Rb well (5 h·Hz deep, 4 µm wide) with the given `lattice:` section (a YAML flow mapping) */
export const RB_LATTICE = (lattice: string): string => `
name: rb-lattice
units: { system: lab, species: Rb87, length_unit_um: 1, energy: h*kHz }
grid: { length: 100, points: 256 }
initial: { kind: sech2, depth: 0.005, width: 4, center: 0 }
flow: { dispersion: quantum, lambda_end: 1, frames: 3 }
protocol: { duration: 100, ramp: sin2 }
lattice: ${lattice}
`;
