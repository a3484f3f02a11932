/**
 * Interrupts that keep folders whole. A command that writes runs in a worker thread (cli/command-thread.ts) while
 * this, the main thread, owns SIGINT and SIGTERM: the jobs are synchronous, so a signal handler beside them would
 * only run when they end. On a signal the main thread waits for a commit under way to finish (never more), stops
 * the worker (terminate() ends even a synchronous loop), removes the worker's staging folders, temporaries and
 * lock, says on stderr what of this run the folder holds (read back from isotrap-run.json) and exits with
 * 128 + the signal number (common practice of POSIX shells: 130 for SIGINT, 143 for SIGTERM).
 *
 * Everything else (stdout, stderr, exit codes 0–3) is the command's own, unchanged.
 */
import { writeSync } from 'node:fs';
import { constants } from 'node:os';
import { basename, dirname } from 'node:path';
import { isatty } from 'node:tty';
import { MessageChannel, receiveMessageOnPort, Worker, type MessagePort } from 'node:worker_threads';
import type { OutputEvent } from '../io/output-events.ts';
import { MANIFEST_FILE, readManifest, releaseFolder } from '../io/run-folder.ts';

/** states of the commit gate shared with the worker (one Int32 at index 0) */
export const GATE_IDLE = 0;
export const GATE_COMMITTING = 1;
export const GATE_STOPPING = 2;

/** how often an interrupt looks whether a commit under way has ended (common practice: well below a second) */
const GATE_POLL_MS = 5;

/**
 * The jobs of each command that writes, in the order they write: the `job` names of isotrap-run.json, and
 * `figures`/`report` for the figures and pages written in place after them.
 */
export const COMMAND_JOBS: Readonly<Record<string, readonly string[]>> = {
  design: ['design'],
  verify: ['design', 'verify'],
  run: ['design', 'verify', 'report'],
  check: ['check'],
  compare: ['compare', 'figures'],
  lattice: ['lattice', 'figures'],
  report: ['report'],
  export: ['export'],
  sweep: ['sweep', 'report'],
};

/** whether a standard stream is a terminal, and its width */
export interface StreamInfo {
  tty: boolean;
  columns?: number;
}

export interface WorkerInput {
  argv: string[];
  /** where the worker posts what it writes (OutputEvent) */
  events: MessagePort;
  /** the commit gate (an Int32Array's buffer) */
  gate: SharedArrayBuffer;
  stdout: StreamInfo;
  stderr: StreamInfo;
}

/** one output folder of the run, as the worker announced it */
interface FolderRecord {
  shown: string;
  /** names written in place (not through a run folder's commit) */
  loose: Set<string>;
}

/** what the worker said it wrote */
class RunRecord {
  readonly folders = new Map<string, FolderRecord>();
  readonly runs = new Set<string>();

  note(event: OutputEvent): void {
    if (event.kind === 'folder') {
      if (!this.folders.has(event.dir)) this.folders.set(event.dir, { shown: event.shown, loose: new Set() });
    } else if (event.kind === 'file') {
      const folder = this.folders.get(dirname(event.path));
      const name = basename(event.path);
      if (folder && name !== MANIFEST_FILE) folder.loose.add(name);
    } else this.runs.add(event.run);
  }
}

/** whether a standard stream is a terminal (its stream is opened here only then, to read the width) */
function streamInfo(fd: 1 | 2): StreamInfo {
  if (!isatty(fd)) return { tty: false };
  return { tty: true, columns: (fd === 1 ? process.stdout : process.stderr).columns };
}

/** "a", "a and b", "a, b and c" */
function listWords(words: readonly string[]): string {
  return words.length <= 1 ? (words[0] ?? '') : `${words.slice(0, -1).join(', ')} and ${words[words.length - 1]}`;
}

/** what one folder holds of this run: committed files by job (from the manifest) and files written in place */
export interface FolderKept {
  shown: string;
  jobs: Map<string, string[]>;
  loose: string[];
}

/**
 * The interrupt message: the job under way, what each folder holds of this run and which jobs were not
 * written. `jobs` is the command's list (COMMAND_JOBS); the job under way is named once one has been committed
 * (before that, a command may still be computing an earlier job than it writes first, so the command is named).
 */
export function interruptMessage(signal: string, command: string, kept: readonly FolderKept[]): string {
  const jobs = COMMAND_JOBS[command] ?? [command];
  const done = new Set(kept.flatMap((k) => [...k.jobs.keys()]));
  const current = jobs.find((j) => !done.has(j));
  const head = `isotrap: interrupted by ${signal}${done.size === 0 ? ` during ${command}` : current ? ` during ${current}` : ''}`;
  const held = kept.filter((k) => k.jobs.size > 0 || k.loose.length > 0);
  if (held.length === 0) return kept.length === 0 ? `${head}: nothing was written` : `${head}: nothing of this run was written to ${listWords(kept.map((k) => k.shown))}`;
  const parts = held.map((k) => {
    const committed = [...k.jobs];
    const pieces: string[] = [];
    if (committed.length > 0) pieces.push(`the complete ${listWords(committed.map(([job]) => job))} of this run (${committed.flatMap(([, files]) => files).join(', ')}; see ${MANIFEST_FILE})`);
    if (k.loose.length > 0) pieces.push(`part of ${committed.length > 0 ? 'its' : 'the'} ${current ?? 'output'} (${k.loose.join(', ')})`);
    return `${k.shown} holds ${pieces.join(' and ')}`;
  });
  const partial = held.some((k) => k.loose.length > 0);
  const pending = jobs.filter((j) => !done.has(j) && !(partial && j === current));
  const missing = [...(partial && current ? [`the ${current} is incomplete`] : []), ...(pending.length > 0 ? [`${listWords(pending)} ${pending.length === 1 ? 'was' : 'were'} not written`] : [])];
  return `${head}: ${parts.join('; ')}${missing.length > 0 ? `; ${missing.join('; ')}` : ''}`;
}

/** release each folder of the stopped worker and read back what it holds of this run */
function collectKept(record: RunRecord): FolderKept[] {
  return [...record.folders].map(([dir, folder]) => {
    releaseFolder(dir, process.pid);
    const jobs = new Map<string, string[]>();
    let files: [string, { job: string; run: string }][] = [];
    try {
      files = Object.entries(readManifest(dir).files);
    } catch {
      // an unreadable manifest records nothing of this run
    }
    for (const [name, entry] of files) if (record.runs.has(entry.run)) jobs.set(entry.job, [...(jobs.get(entry.job) ?? []), name]);
    const loose = [...folder.loose].filter((name) => !files.some(([n]) => n === name));
    return { shown: folder.shown, jobs, loose };
  });
}

/** wait until no commit is under way and close the gate so that none starts */
export async function closeGate(gate: Int32Array): Promise<void> {
  while (Atomics.compareExchange(gate, 0, GATE_IDLE, GATE_STOPPING) === GATE_COMMITTING) await new Promise((r) => setTimeout(r, GATE_POLL_MS));
}

/** pause between retries when a non-blocking descriptor is full (common practice: short enough to go unnoticed) */
const RETRY_MS = 2;

const pause = new Int32Array(new SharedArrayBuffer(4));

/** write all of `data` to descriptor `fd` synchronously, waiting while a non-blocking pipe or terminal is full */
export function writeFully(fd: number, data: Uint8Array): void {
  let offset = 0;
  while (offset < data.length) {
    try {
      offset += writeSync(fd, data, offset);
    } catch (err) {
      if ((err as NodeJS.ErrnoException).code !== 'EAGAIN') throw err;
      Atomics.wait(pause, 0, 0, RETRY_MS);
    }
  }
}

/** write a message to stderr synchronously */
function writeError(text: string): void {
  writeFully(2, Buffer.from(text));
}

/** run a writing command in a worker thread, owning SIGINT/SIGTERM; resolves with the exit code */
function supervise(argv: string[], command: string): Promise<number> {
  const shared = new SharedArrayBuffer(4);
  const gate = new Int32Array(shared);
  const events = new MessageChannel();
  const input: WorkerInput = { argv, events: events.port2, gate: shared, stdout: streamInfo(1), stderr: streamInfo(2) };
  const record = new RunRecord();
  const worker = new Worker(new URL('./command-worker.mjs', import.meta.url), { workerData: input, transferList: [events.port2], stdout: true, stderr: true });
  // anything written to the worker's own streams (e.g. a warning before the command starts) still reaches the user
  worker.stdout.on('data', (chunk: Buffer) => writeFully(1, chunk));
  worker.stderr.on('data', (chunk: Buffer) => writeFully(2, chunk));
  events.port1.on('message', (event: OutputEvent) => record.note(event));
  return new Promise<number>((resolve) => {
    let signal: NodeJS.Signals | null = null;
    let failed = false;
    const finish = (code: number) => {
      events.port1.close();
      process.off('SIGINT', onSignal);
      process.off('SIGTERM', onSignal);
      resolve(code);
    };
    const onSignal = (s: NodeJS.Signals) => {
      if (signal) return;
      signal = s;
      void closeGate(gate)
        .then(() => worker.terminate())
        .then(() => {
          // events posted before the worker stopped may not have been dispatched yet: take them now
          for (let m = receiveMessageOnPort(events.port1); m; m = receiveMessageOnPort(events.port1)) record.note(m.message as OutputEvent);
          return interruptMessage(s, command, collectKept(record));
        })
        .catch((err: Error) => `isotrap: interrupted by ${s}; the output folder could not be tidied (${err.message})`)
        .then((message) => {
          writeError(`${input.stderr.tty ? '\n\x1b[?25h' : ''}${message}\n`);
          finish(128 + constants.signals[s]);
        });
    };
    process.on('SIGINT', onSignal);
    process.on('SIGTERM', onSignal);
    worker.on('error', (err) => {
      failed = true;
      writeError(`isotrap: internal error (please report): ${err.stack ?? String(err)}\n`);
    });
    worker.on('exit', (code) => {
      if (!signal) finish(failed ? 3 : code);
    });
  });
}

/**
 * Run the command line `argv`: a command that writes (COMMAND_JOBS) in a worker thread under supervise; anything
 * else (--version, --help, a mistyped command) directly. Returns the exit code.
 */
export async function runCli(argv: string[]): Promise<number> {
  const command = argv[2];
  const help = argv.some((a) => a === '--help' || a === '-h');
  if (command !== undefined && Object.hasOwn(COMMAND_JOBS, command) && !help) return supervise(argv, command);
  const { main } = await import('./main.ts');
  return main(argv);
}
