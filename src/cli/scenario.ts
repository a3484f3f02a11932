/** The scenario config of a command. Every command reads the same scenario file, so all of them validate against the
 * full schema (compare and lattice sections included). Kept apart from options.ts so that --version and --help do
 * not load the config schemas. */
export { loadLatticeConfig as loadScenario } from '../io/config-lattice.ts';
