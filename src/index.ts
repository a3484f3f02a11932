/**
 * The isotrap library: every command of the command line as a typed function (`import { design, verify } from
 * 'isotrap'`). Configs are validated exactly as on the command line (io/config.ts); numbers come back in natural
 * units inside the results and in the config's units in the summaries and files (README "Units").
 */
import { loadConfig, parseConfig, type Config } from './io/config.ts';
import { runDesign, writeDesignOutputs, type DesignOptions, type DesignResult } from './jobs/design.ts';
import { runVerify, writeVerifyOutputs, type VerifyJobOptions, type VerifyJobResult } from './jobs/verify.ts';

export { loadConfig, parseConfig, type Config };
export { runDesign, writeDesignOutputs, type DesignOptions, type DesignResult };
export { runVerify, writeVerifyOutputs, type VerifyJobOptions, type VerifyJobResult };
export { runPipeline } from './jobs/run.ts';
export { runCheck, runCheckParallel, writeCheckOutputs } from './jobs/check.ts';
export { runCompare, runCompareWithDrives } from './jobs/compare.ts';
export { runLattice } from './jobs/lattice.ts';
export { renderFolder } from './jobs/report.ts';
export { runExport, writeExportOutputs, type ExportOptions, type ExportResult } from './jobs/export.ts';
export { readExportFile, type ExportFile } from './io/formats/export.ts';
export { AcceptanceFailure, NumericalError, UserError } from './core/errors.ts';

/** a config object, or the path of a YAML config to load and validate */
export type ConfigInput = Config | string;

function configOf(input: ConfigInput): Config {
  return typeof input === 'string' ? loadConfig(input) : input;
}

/** the KdV (or Hopf) sequence of a scenario: `isotrap design` without writing files */
export function design(config: ConfigInput, opts: DesignOptions = {}): DesignResult {
  return runDesign(configOf(config), opts);
}

/** the Schrödinger proof of a scenario (designing it first unless a design is given): `isotrap verify` without files */
export async function verify(config: ConfigInput, opts: VerifyJobOptions & { design?: DesignResult } = {}): Promise<VerifyJobResult> {
  const c = configOf(config);
  return runVerify(c, opts.design ?? runDesign(c), opts);
}
