/**
 * File output helpers: atomic writes and output-folder preparation that never deletes anything.
 */
import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, readdirSync, readFileSync, renameSync, rmSync, statSync, unlinkSync, writeFileSync } from 'node:fs';
import { basename, dirname, join, resolve } from 'node:path';
import { UserError } from '../core/errors.ts';
import { publishOutput } from './output-events.ts';

/** temporary files of writeFileAtomic: `.<name>.<pid>.<12 hex>.tmp` */
const TEMPORARY_RE = /^\..+\.(\d+)\.[0-9a-f]{12}\.tmp$/;

/** an I/O failure (permissions, a full disk, a path through a file) is the user's to fix: say which path and why */
function ioError(action: string, path: string, err: unknown): UserError {
  const e = err as NodeJS.ErrnoException;
  const why = e.code ? `${e.code}: ${e.message.replace(/^[A-Z]+: /, '').replace(/, \w+ '.*'$/, '')}` : String(e.message ?? err);
  return new UserError(`cannot ${action} ${path} (${why})`);
}

/** bytes in the largest binary unit that keeps the number ≥ 1 (B, KiB, MiB, GiB) */
export function formatBytes(bytes: number): string {
  const units = ['B', 'KiB', 'MiB', 'GiB'];
  let v = bytes;
  let i = 0;
  while (v >= 1024 && i < units.length - 1) {
    v /= 1024;
    i++;
  }
  return `${i === 0 ? v : v.toPrecision(3)} ${units[i]}`;
}

/**
 * Read an input file of at most `maxBytes`, checked before reading: a missing path, a folder, a device (such as
 * /dev/zero, which never ends) or an oversized file is an input error naming `what` and the limit.
 */
export function readBoundedFile(path: string, maxBytes: number, what: string): Buffer {
  if (!existsSync(path)) throw new UserError(`${what} ${path} does not exist`);
  const st = statSync(path);
  if (!st.isFile()) throw new UserError(`${what} ${path} is not a regular file`);
  if (st.size > maxBytes) throw new UserError(`${what} ${path} has ${formatBytes(st.size)}; at most ${formatBytes(maxBytes)} are read`);
  try {
    return readFileSync(path);
  } catch (err) {
    throw ioError('read', path, err);
  }
}

/** true when a process with this id is alive (signal 0 tests existence without sending anything) */
export function processAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (err) {
    return (err as NodeJS.ErrnoException).code === 'EPERM';
  }
}

/** remove temporaries left in `dir` by writers that were killed mid-write (their process is gone, or `stale` says so) */
export function removeStaleTemporaries(dir: string, stale?: (pid: number) => boolean): string[] {
  return removeLeftovers(dir, TEMPORARY_RE, stale);
}

/**
 * Remove the entries of `dir` whose name matches `pattern` (group 1: the writer's process id) and whose writer has
 * died (or, given `stale`, whose writer's id it accepts); returns their names. Entries of live writers are kept.
 */
export function removeLeftovers(dir: string, pattern: RegExp, stale: (pid: number) => boolean = (pid) => !processAlive(pid)): string[] {
  const removed: string[] = [];
  let names: string[];
  try {
    names = readdirSync(dir);
  } catch {
    return removed;
  }
  for (const name of names) {
    const m = pattern.exec(name);
    if (!m || !stale(Number(m[1]))) continue;
    rmSync(join(dir, name), { recursive: true, force: true });
    removed.push(name);
  }
  return removed;
}

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
    publishOutput({ kind: 'file', path: resolve(path) });
  } catch (err) {
    try {
      unlinkSync(tmp);
    } catch {
      // the temporary file was never created or is already gone
    }
    throw ioError('write', path, err);
  }
}

export interface PrepareOutputOptions {
  /** allow overwriting files that this run will produce */
  readonly force: boolean;
  /** file names (relative to dir) that the run will write */
  readonly produces: readonly string[];
}

/**
 * The checks of prepareOutputDir without creating anything: run them before computing, so that a run that would
 * be refused at the end is refused at once. Returns the resolved directory.
 */
export function checkOutputDir(dir: string, options: PrepareOutputOptions): string {
  if (dir.trim() === '') throw new UserError('output folder "" is not allowed: name a folder (e.g. --out outputs/my-run)');
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
  publishOutput({ kind: 'folder', dir: abs, shown: dir });
  return abs;
}

/**
 * Create `dir` (recursively) for a run's outputs. If any file in `produces` already exists and `force` is not
 * set, throws a UserError naming that file and telling the user to pass --force. Existing files are never
 * deleted here (except temporaries of killed writers, see removeStaleTemporaries); with --force they are
 * simply overwritten later by the writer. Returns the resolved directory.
 */
export function prepareOutputDir(dir: string, options: PrepareOutputOptions): string {
  const abs = checkOutputDir(dir, options);
  try {
    mkdirSync(abs, { recursive: true });
  } catch (err) {
    throw ioError('create output folder', dir, err);
  }
  removeStaleTemporaries(abs);
  return abs;
}
