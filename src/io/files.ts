/**
 * File output helpers: atomic writes and output-folder preparation that never deletes anything.
 */
import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, renameSync, statSync, unlinkSync, writeFileSync } from 'node:fs';
import { basename, dirname, join, resolve } from 'node:path';
import { UserError } from '../core/errors.ts';

/**
 * Write `data` to `path` atomically: the bytes go to a temporary file in the same directory (same file system,
 * so the rename is atomic on POSIX), which is then renamed over `path`. Readers see the old file or the new
 * one, never a partial one. The temporary file is removed if the write fails.
 */
export function writeFileAtomic(path: string, data: string | Uint8Array): void {
  const dir = dirname(path);
  const tmp = join(dir, `.${basename(path)}.${process.pid}.${randomBytes(6).toString('hex')}.tmp`);
  try {
    writeFileSync(tmp, data);
    renameSync(tmp, path);
  } catch (err) {
    try {
      unlinkSync(tmp);
    } catch {
      // the temporary file was never created or is already gone
    }
    throw err;
  }
}

export interface PrepareOutputOptions {
  /** allow overwriting files that this run will produce */
  readonly force: boolean;
  /** file names (relative to dir) that the run will write */
  readonly produces: readonly string[];
}

/**
 * Create `dir` (recursively) for a run's outputs. If any file in `produces` already exists and `force` is not
 * set, throws a UserError naming that file and telling the user to pass --force. Existing files are never
 * deleted here; with --force they are simply overwritten later by the writer. Returns the resolved directory.
 */
export function prepareOutputDir(dir: string, options: PrepareOutputOptions): string {
  const abs = resolve(dir);
  if (existsSync(abs) && !statSync(abs).isDirectory()) {
    throw new UserError(`output folder ${dir} exists but is not a folder: remove it or choose another name`);
  }
  if (!options.force) {
    const clashes = options.produces.filter((name) => existsSync(join(abs, name)));
    if (clashes.length > 0) {
      const shown = clashes.map((name) => join(dir, name)).join(', ');
      throw new UserError(
        `${clashes.length === 1 ? 'output file' : 'output files'} ${shown} already ${clashes.length === 1 ? 'exists' : 'exist'}: ` +
          `pass --force to overwrite (other files in ${dir} are never deleted)`,
      );
    }
  }
  try {
    mkdirSync(abs, { recursive: true });
  } catch (err) {
    throw new UserError(`cannot create output folder ${dir}: ${(err as Error).message}`);
  }
  return abs;
}
