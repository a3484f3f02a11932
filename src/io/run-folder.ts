/**
 * A run's outputs in one folder, whole or not at all.
 *
 *  - Lock: `.isotrap-lock` is created exclusively (O_EXCL) and holds the writer's process id; a second writer is
 *    refused while that process lives, and a lock left by a process that has died is taken over.
 *  - Staging: every file of the run is first written to `.isotrap-staging-<pid>-<hex>/` inside the folder, so
 *    an interrupted run leaves nothing in the folder's own names.
 *  - Commit: the staged files are renamed into place (each rename atomic on POSIX), then the manifest
 *    `isotrap-run.json` is written last: every file with its SHA-256, the run identity and the config hash.
 *    Readers trust a file only when its bytes match the manifest, so a mixture of two runs (an interrupted
 *    commit, or files of an older run) is detected and refused.
 *
 * Files other than the run's own are never touched. Common practice for crash-consistent output (write to a
 * temporary name, rename, record completion last).
 */
import { createHash, randomBytes } from 'node:crypto';
import { closeSync, existsSync, mkdirSync, openSync, readFileSync, renameSync, rmSync, unlinkSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { UserError } from '../core/errors.ts';
import { prepareOutputDir, processAlive, removeLeftovers, removeStaleTemporaries, writeFileAtomic } from './files.ts';
import { publishOutput } from './output-events.ts';

export const LOCK_FILE = '.isotrap-lock';
export const MANIFEST_FILE = 'isotrap-run.json';
const STAGING_PREFIX = '.isotrap-staging-';
const STAGING_RE = /^\.isotrap-staging-(\d+)-[0-9a-f]+$/;
export const MANIFEST_FORMAT = 'isotrap-run/1';

export interface ManifestEntry {
  sha256: string;
  bytes: number;
  /** the command that wrote the file (design, verify, report, …) */
  job: string;
  run: string;
  config_hash: string;
}

export interface RunManifest {
  format: typeof MANIFEST_FORMAT;
  files: Record<string, ManifestEntry>;
}

export interface RunIdentity {
  /** unique per invocation (several jobs of one `run` share it) */
  run: string;
  /** SHA-256 of the config text, first 16 hex digits */
  configHash: string;
}

/** a fresh run identity for a config text */
export function newRunIdentity(configText: string): RunIdentity {
  return { run: `${new Date().toISOString()}-${randomBytes(4).toString('hex')}`, configHash: configHash(configText) };
}

export function configHash(configText: string): string {
  return createHash('sha256').update(configText).digest('hex').slice(0, 16);
}

function sha256(data: string | Uint8Array): string {
  return createHash('sha256').update(data).digest('hex');
}

/** take the folder's lock, or refuse naming the process that holds it; a dead holder's lock is taken over */
function acquireLock(dir: string, shown: string): string {
  const path = join(dir, LOCK_FILE);
  for (let attempt = 0; attempt < 2; attempt++) {
    try {
      const fd = openSync(path, 'wx');
      writeSync(fd, String(process.pid));
      closeSync(fd);
      return path;
    } catch (err) {
      if ((err as NodeJS.ErrnoException).code !== 'EEXIST') throw new UserError(`cannot lock output folder ${shown} (${(err as Error).message})`);
      const holder = Number.parseInt(readFileSafe(path), 10);
      if (Number.isInteger(holder) && processAlive(holder)) {
        throw new UserError(`output folder ${shown} is being written by another isotrap process (pid ${holder}); wait for it or choose another --out`);
      }
      rmSync(path, { force: true });
    }
  }
  throw new UserError(`cannot lock output folder ${shown}: another process keeps taking the lock`);
}

function readFileSafe(path: string): string {
  try {
    return readFileSync(path, 'utf8');
  } catch {
    return '';
  }
}


/** the folder's manifest, or an empty one when there is none yet */
export function readManifest(dir: string): RunManifest {
  const path = join(dir, MANIFEST_FILE);
  if (!existsSync(path)) return { format: MANIFEST_FORMAT, files: {} };
  let parsed: unknown;
  try {
    parsed = JSON.parse(readFileSync(path, 'utf8'));
  } catch (err) {
    throw new UserError(`${path}: not a readable run manifest (${(err as Error).message})`);
  }
  const m = parsed as Partial<RunManifest>;
  if (m?.format !== MANIFEST_FORMAT || typeof m.files !== 'object' || m.files === null) throw new UserError(`${path}: not an isotrap run manifest (format ${JSON.stringify(m?.format)})`);
  return m as RunManifest;
}

/**
 * The manifest entries of `names`, each checked against the file's bytes; a file missing from the manifest, or
 * whose bytes differ from it, is refused (an interrupted or mixed run).
 */
export function verifiedEntries(dir: string, names: readonly string[]): ManifestEntry[] {
  const manifest = readManifest(dir);
  return names.map((name) => {
    const entry = manifest.files[name];
    const path = join(dir, name);
    if (!entry) throw new UserError(`${path} is not recorded in ${MANIFEST_FILE}: it was not written by a completed isotrap run; run the command again`);
    if (sha256(readFileSync(path)) !== entry.sha256) {
      throw new UserError(`${path} differs from the run that ${MANIFEST_FILE} records (an interrupted or concurrent run changed it); run the command again with --force`);
    }
    return entry;
  });
}

/**
 * Refuse to combine files of different runs: every named file must carry the same config hash, and files of the
 * same command the same run identity.
 */
export function requireOneConfig(dir: string, names: readonly string[]): ManifestEntry[] {
  const entries = verifiedEntries(dir, names);
  const hashes = new Set(entries.map((e) => e.config_hash));
  if (hashes.size > 1) {
    const which = names.map((n, i) => `${n} (config ${entries[i].config_hash}, run ${entries[i].run})`).join(', ');
    throw new UserError(`${dir} holds results of different configurations: ${which}; rerun them together (isotrap run … --force)`);
  }
  return entries;
}

/** One job's writes into an output folder: locked, staged, committed whole. */
export class RunFolder {
  readonly dir: string;
  private readonly shown: string;
  private readonly staging: string;
  private readonly lock: string;
  private readonly job: string;
  private readonly identity: RunIdentity;
  private readonly written = new Map<string, { sha256: string; bytes: number }>();
  private open = true;

  /**
   * Prepare `dir` (created when missing; existing outputs in `produces` refused without `force`, before any
   * computation), take its lock and create the staging folder.
   */
  constructor(dir: string, options: { force: boolean; produces: readonly string[]; job: string; identity: RunIdentity }) {
    this.shown = dir;
    this.dir = prepareOutputDir(dir, { force: options.force, produces: options.produces });
    this.lock = acquireLock(this.dir, dir);
    this.job = options.job;
    this.identity = options.identity;
    try {
      removeLeftovers(this.dir, STAGING_RE); // staging folders of writers that died before committing
      this.staging = join(this.dir, `${STAGING_PREFIX}${process.pid}-${randomBytes(4).toString('hex')}`);
      mkdirSync(this.staging);
    } catch (err) {
      rmSync(this.lock, { force: true });
      throw new UserError(`cannot prepare output folder ${dir} (${(err as Error).message})`);
    }
  }

  /** stage one output file (not visible under its own name until commit) */
  write(name: string, data: string | Uint8Array): void {
    if (!this.open) throw new RangeError(`output folder ${this.shown}: write after commit or abort`);
    writeFileAtomic(join(this.staging, name), data);
    this.written.set(name, { sha256: sha256(data), bytes: typeof data === 'string' ? Buffer.byteLength(data) : data.byteLength });
  }

  /** true when `name` has been staged */
  has(name: string): boolean {
    return this.written.has(name);
  }

  /**
   * Move the staged files into place, record them in the manifest (last), release the lock; returns the paths.
   * The renames and the manifest are announced as one commit (output-events.ts), so that an interrupt can wait
   * for them to end.
   */
  commit(): string[] {
    if (!this.open) throw new RangeError(`output folder ${this.shown}: committed twice`);
    const manifest = readManifest(this.dir);
    const event = { dir: this.dir, job: this.job, run: this.identity.run, files: [...this.written.keys()] };
    publishOutput({ kind: 'commit-start', ...event });
    const paths: string[] = [];
    try {
      for (const [name] of this.written) {
        const target = join(this.dir, name);
        try {
          renameSync(join(this.staging, name), target);
        } catch (err) {
          this.abort();
          throw new UserError(`cannot write ${target} (${(err as Error).message})`);
        }
        paths.push(target);
      }
      for (const [name, w] of this.written) manifest.files[name] = { ...w, job: this.job, run: this.identity.run, config_hash: this.identity.configHash };
      writeFileAtomic(join(this.dir, MANIFEST_FILE), JSON.stringify(manifest, null, 1) + '\n');
    } finally {
      publishOutput({ kind: 'commit-end', ...event });
    }
    this.close();
    return paths;
  }

  /** drop everything staged and release the lock (the folder's own files are untouched) */
  abort(): void {
    if (this.open) this.close();
  }

  private close(): void {
    this.open = false;
    rmSync(this.staging, { recursive: true, force: true });
    try {
      unlinkSync(this.lock);
    } catch {
      // already released
    }
  }
}

/**
 * Release what process `pid` holds in `dir` after its writer thread was stopped: its staging folders, its
 * temporaries and the lock when it holds `pid`. The folder's own files are untouched. Returns the removed names.
 */
export function releaseFolder(dir: string, pid: number): string[] {
  const ours = (p: number) => p === pid;
  const removed = [...removeLeftovers(dir, STAGING_RE, ours), ...removeStaleTemporaries(dir, ours)];
  const lock = join(dir, LOCK_FILE);
  if (readFileSafe(lock) === String(pid)) {
    rmSync(lock, { force: true });
    removed.push(LOCK_FILE);
  }
  return removed;
}

export interface RunWriteOptions {
  force: boolean;
  /** the files the job writes, in the order their paths are returned */
  produces: readonly string[];
  job: string;
  /** run identity and config hash (configIdentity), shared by the jobs of one invocation */
  identity: RunIdentity;
}

/** identity of a validated config: SHA-256 of its JSON without `meta` (where it was read from) */
export function configIdentity(config: object): RunIdentity {
  return newRunIdentity(JSON.stringify({ ...config, meta: undefined }));
}

/**
 * Write one job's files whole: open the folder (refusing existing outputs without --force, and a concurrent
 * writer), let `write` stage every file of `produces`, commit; on any error drop what was staged. Returns the
 * paths of `produces`.
 */
export function writeRun(dir: string, opts: RunWriteOptions, write: (out: RunFolder) => void): string[] {
  const out = new RunFolder(dir, { force: opts.force, produces: opts.produces, job: opts.job, identity: opts.identity });
  try {
    write(out);
    const missing = opts.produces.filter((name) => !out.has(name));
    if (missing.length > 0) throw new RangeError(`${opts.job}: ${missing.join(', ')} not written`);
    out.commit();
  } catch (err) {
    out.abort();
    throw err;
  }
  return opts.produces.map((name) => join(out.dir, name));
}
