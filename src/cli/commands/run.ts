/** `isotrap run <config>`: design → verify → report into one output folder. */
import type { CommonOptions } from '../options.ts';
import { pipelineCommand } from './verify.ts';

export async function runCommand(configPath: string, opts: CommonOptions): Promise<number> {
  return pipelineCommand(configPath, opts, true);
}
