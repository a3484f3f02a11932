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
