/**
 * `verify` and `run`: design → verify (→ report) into one output folder. The design is written even when the flow
 * stops before λ_end (then nothing is verified and an AcceptanceFailure, exit 1, says where the design is).
 */
import { AcceptanceFailure } from '../core/errors.ts';
import type { Config } from '../io/config.ts';
import { checkOutputDir } from '../io/files.ts';
import { configIdentity } from '../io/run-folder.ts';
import type { FigureSize } from '../report/style.ts';
import { DESIGN_FILES, runDesign, writeDesignOutputs, type DesignResult } from './design.ts';
import { renderFolder } from './report.ts';
import { runVerify, TRACE_SAMPLES, VERIFY_FILES, writeVerifyOutputs, type VerifyJobResult } from './verify.ts';
import { makeContext } from './context.ts';
import { assertDesignAffordable, assertVerifyAffordable, type VerifyEstimate } from '../io/cost.ts';

export interface PipelineOptions {
  /** output folder */
  dir: string;
  force: boolean;
  /** also render the figures and report.html from the written folder */
  report: boolean;
  /** recorded in the report's provenance */
  toolVersion: string;
  /** figure size of the report (report/style.ts): paper (default) or slides */
  figures?: FigureSize;
  onProgress?: (stage: 'design' | 'verify', fraction: number) => void;
  /** the verify's estimated cost, before anything is computed */
  onEstimate?: (estimate: VerifyEstimate) => void;
}

export interface PipelineResult {
  design: DesignResult;
  verify: VerifyJobResult;
  files: string[];
}

/** Design, verify and (with opts.report) render the report of one config into opts.dir. */
export async function runPipeline(config: Config, opts: PipelineOptions): Promise<PipelineResult> {
  const started = performance.now();
  const progress = opts.onProgress ?? (() => {});
  // existing results are refused before anything is computed; design and verify share one run identity
  checkOutputDir(opts.dir, { force: opts.force, produces: [...DESIGN_FILES, ...VERIFY_FILES] });
  const identity = configIdentity(config);
  // the whole pipeline's cost is judged before the design starts
  const context = makeContext(config);
  assertDesignAffordable(config, context, true);
  // a painted drive costs about a corrected one, and its gauge check propagates the bound states once more
  const painted = config.verify?.painted.length ?? 0;
  const estimate = config.protocol ? assertVerifyAffordable(config, context, context.units.timeToNatural(config.protocol.duration), TRACE_SAMPLES, { corrected: 1 + 2 * painted, bare: 1 }) : null;
  if (estimate) opts.onEstimate?.(estimate);
  const design = runDesign(config, { onProgress: (l, end) => progress('design', l / end), context });
  if (!design.summary.complete) {
    writeDesignOutputs(design, opts.dir, opts.force, identity);
    throw new AcceptanceFailure(`${config.meta.source}: the ${config.flow.dispersion} flow stops at λ = ${design.summary.lambda_reached} before flow.lambda_end = ${config.flow.lambda_end} (${design.summary.breaking?.reason}); nothing to verify (the design it reached is in ${opts.dir})`);
  }
  const verify = await runVerify(config, design, { onProgress: (f) => progress('verify', f) });
  const files = [...writeDesignOutputs(design, opts.dir, opts.force, identity), ...writeVerifyOutputs(verify, opts.dir, opts.force, identity)];
  if (opts.report) files.push(...renderFolder(opts.dir, { force: opts.force, toolVersion: opts.toolVersion, runSeconds: (performance.now() - started) / 1000, figures: opts.figures }));
  return { design, verify, files };
}
